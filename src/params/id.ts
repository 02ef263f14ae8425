import type { ParamMatcher } from '@sveltejs/kit';
import { idParamPattern } from '$lib/validation/ids';

/** Opaque ids minted by Skein (base64url, 20 characters) or UUIDs. */
export const match = ((param: string): param is string =>
	idParamPattern.test(param)) satisfies ParamMatcher;
