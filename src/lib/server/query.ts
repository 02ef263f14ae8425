import type { z } from 'zod';
import { fieldErrors } from '$lib/validation/people';
import { ApiError } from '$server/api';

/** Validates query parameters against a schema; bad ones become a 422 naming each parameter. */
export function readQuery<S extends z.ZodType>(url: URL, schema: S): z.infer<S> {
	const parsed = schema.safeParse(Object.fromEntries(url.searchParams));
	if (!parsed.success)
		throw new ApiError('invalid', 'Some query parameters are not valid', fieldErrors(parsed.error));
	return parsed.data;
}
