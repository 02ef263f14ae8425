/**
 * What the database refuses for a value's content (retrying cannot help), as opposed to being unavailable: such a
 * frame is quarantined and such an open answered invalid_open, never 1011 "storage unavailable".
 */

/**
 * Whether an error is about what a statement's data holds rather than the database being unavailable (then
 * retrying cannot help). SQLSTATE classes (PostgreSQL documentation, Appendix A): 22 data exception (22021 a
 * NUL in text, 22008 a timestamp out of range, 22P05 `\u0000` in jsonb…), 23 integrity constraint violation
 * (23514: no partition holds the row) except 23505, a duplicate key, which a resend resolves; 54 program limit
 * exceeded (a value too large to index). A RangeError is a value postgres.js could not serialise (an invalid Date).
 */
export function refusedForContent(err: unknown): boolean {
	if (err instanceof RangeError) return true;
	if (!(err instanceof Error) || err.name !== 'PostgresError' || !('code' in err)) return false;
	const code = err.code;
	return typeof code === 'string' && /^(22|23|54)[0-9A-Z]{3}$/.test(code) && code !== '23505';
}

/** Text PostgreSQL stores: NUL and unpaired surrogates written as \uXXXX (validation keeps them out of reasons). */
export function storableText(s: string): string {
	return s.replace(
		/\0|[\ud800-\udbff](?![\udc00-\udfff])|(?<![\ud800-\udbff])[\udc00-\udfff]/g,
		(c) => `\\u${c.charCodeAt(0).toString(16).padStart(4, '0')}`
	);
}
