import type { ParamMatcher } from '@sveltejs/kit';

/** Secrets Skein mints: a kind prefix and 32 base64url characters. */
export const match = ((param: string): param is string =>
	/^sk[a-z]_[A-Za-z0-9_-]{32}$/.test(param)) satisfies ParamMatcher;
