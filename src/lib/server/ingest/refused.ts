/**
 * What the database refuses for a value's content (retrying cannot help), as opposed to being unavailable: such a
 * frame is quarantined and such an open answered invalid_open, never 1011 "storage unavailable".
 */
import { DrizzleQueryError } from 'drizzle-orm';

/**
 * Whether an error is about what a statement's data holds rather than the database being unavailable (then
 * retrying cannot help). SQLSTATE classes (PostgreSQL documentation, Appendix A): 22 data exception (22021 a
 * NUL in text, 22008 a timestamp out of range, 22P05 `\u0000` in jsonb…), 23 integrity constraint violation
 * (23514: no partition holds the row) except 23505, a duplicate key, which a resend resolves; 54 program limit
 * exceeded (a value too large to index). A RangeError is a value postgres.js could not serialise (an invalid Date).
 * A Drizzle query's error is judged by the driver's error it wraps.
 */
export function refusedForContent(wrapped: unknown): boolean {
	const err = driverError(wrapped);
	if (err instanceof RangeError) return true;
	if (!(err instanceof Error) || err.name !== 'PostgresError' || !('code' in err)) return false;
	const code = err.code;
	return typeof code === 'string' && /^(22|23|54)[0-9A-Z]{3}$/.test(code) && code !== '23505';
}

/** The database's reason for a refusal: the driver's message (not Drizzle's, which spells out the query). */
export function refusalReason(err: unknown): string {
	const e = driverError(err);
	return e instanceof Error ? e.message : String(e);
}

/** The error postgres.js raised: Drizzle wraps it in a DrizzleQueryError as its cause. */
function driverError(err: unknown): unknown {
	return err instanceof DrizzleQueryError && err.cause !== undefined ? err.cause : err;
}

/** Text PostgreSQL stores: NUL and unpaired surrogates written as \uXXXX (validation keeps them out of reasons). */
export function storableText(s: string): string {
	return s.replace(
		/\0|[\ud800-\udbff](?![\udc00-\udfff])|(?<![\ud800-\udbff])[\udc00-\udfff]/g,
		(c) => `\\u${c.charCodeAt(0).toString(16).padStart(4, '0')}`
	);
}
