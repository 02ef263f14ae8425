import { z } from 'zod';

/** Ids in URLs: opaque ids minted by Skein (base64url, 20 characters) or UUIDs. */
export const idParamPattern =
	/^(?:[A-Za-z0-9_-]{20}|[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12})$/i;

/** The `[id=id]` route parameter, as the matcher in src/params/id.ts checks it and the API document shows it. */
export const idParam = z
	.string()
	.regex(idParamPattern, 'Unknown id')
	.meta({ description: 'a Skein id (20 characters, base64url) or a UUID' });
