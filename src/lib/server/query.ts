import type { z } from 'zod';
import { fieldErrors } from '$lib/validation/people';
import { ApiError } from '$server/api';

export type QueryCheck<S extends z.ZodType> =
	{ ok: true; data: z.infer<S> } | { ok: false; message: string; details: Record<string, string> };

/**
 * Checks query parameters against a schema. A parameter given twice (`?limit=1&limit=2`, how arrays travel in a
 * query string) is refused rather than one of them silently winning; the message names every bad parameter.
 */
export function checkQuery<S extends z.ZodType>(url: URL, schema: S): QueryCheck<S> {
	const raw: Record<string, string> = {};
	const details: Record<string, string> = {};
	for (const [key, value] of url.searchParams) {
		if (key in raw) details[key] = `${key} must be given once`;
		else raw[key] = value;
	}
	const parsed = schema.safeParse(raw);
	if (parsed.success && Object.keys(details).length === 0) return { ok: true, data: parsed.data };
	if (!parsed.success)
		for (const [k, v] of Object.entries(fieldErrors(parsed.error))) details[k] ??= v;
	return {
		ok: false,
		message: `Some query parameters are not valid: ${Object.values(details).join('; ')}`,
		details
	};
}

/** Validates query parameters for an API endpoint; bad ones become a 422 naming each parameter. */
export function readQuery<S extends z.ZodType>(url: URL, schema: S): z.infer<S> {
	const checked = checkQuery(url, schema);
	if (!checked.ok) throw new ApiError('invalid', checked.message, checked.details);
	return checked.data;
}
