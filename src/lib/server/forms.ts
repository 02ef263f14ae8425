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

/** Only same-site paths may be redirect targets after sign-in. */
export function safeNext(next: string | null): string {
	if (!next || !next.startsWith('/') || next.startsWith('//') || next.startsWith('/\\'))
		return '/runs';
	return next;
}
