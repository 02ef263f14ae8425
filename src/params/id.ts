import type { ParamMatcher } from '@sveltejs/kit';

/** Opaque ids minted by Skein (base64url, 20 characters) or UUIDs. */
export const match = ((param: string): param is string =>
	/^[A-Za-z0-9_-]{20}$/.test(param) ||
	/^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i.test(
		param
	)) satisfies ParamMatcher;
