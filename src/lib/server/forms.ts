import { fail, type ActionFailure } from '@sveltejs/kit';
import type { z } from 'zod';
import { fieldErrors } from '$lib/validation/people';

export type FormFailure = ActionFailure<{
	errors: Record<string, string>;
	values: Record<string, string>;
}>;

/** Validates a form post; on bad input returns a 400 with field errors and the values to refill (never passwords). */
export async function parseForm<S extends z.ZodType>(
	request: Request,
	schema: S
): Promise<{ ok: true; data: z.infer<S> } | { ok: false; failure: FormFailure }> {
	const form = await request.formData();
	const raw: Record<string, string> = {};
	for (const [k, v] of form) if (typeof v === 'string') raw[k] = v;
	const parsed = schema.safeParse(raw);
	if (parsed.success) return { ok: true, data: parsed.data };
	return {
		ok: false,
		failure: fail(400, { errors: fieldErrors(parsed.error), values: refill(raw) })
	};
}

export function refill(raw: Record<string, string>): Record<string, string> {
	const out: Record<string, string> = {};
	for (const [k, v] of Object.entries(raw)) if (!/password|confirm|current/i.test(k)) out[k] = v;
	return out;
}

export function formError(
	status: 400 | 403 | 404 | 409 | 429,
	message: string,
	field = '_',
	values: Record<string, string> = {}
) {
	return fail(status, { errors: { [field]: message }, values });
}

const nextFallback = '/runs';
const probeOrigin = 'http://skein.invalid';

/**
 * Only a path of this site may be a redirect target after sign-in. Browsers drop tabs and newlines from a URL,
 * read `\` as `/`, and take `//host` or `/\host` for another host, so anything with a control character or a
 * backslash is refused outright, and what is left must resolve to this origin (WHATWG URL parsing, as
 * browsers do). The answer is the resolved path, never the raw input.
 */
export function safeNext(next: string | null): string {
	if (!next || next.length > 2048 || !next.startsWith('/') || next.startsWith('//'))
		return nextFallback;
	if (/[\u0000-\u001f\u007f\\]/.test(next)) return nextFallback;
	let url: URL;
	try {
		url = new URL(next, probeOrigin);
	} catch {
		return nextFallback;
	}
	if (url.origin !== probeOrigin) return nextFallback;
	const path = url.pathname + url.search + url.hash;
	return path.startsWith('//') ? nextFallback : path;
}
