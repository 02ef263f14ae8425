import { json } from '@sveltejs/kit';
import { pinListQuery } from '$lib/validation/runs';
import { endpoint } from '$server/api';
import { listAllPins } from '$server/pins';
import { readQuery } from '$server/query';
import type { RequestHandler } from './$types';

/** Every pin, newest first. */
export const GET: RequestHandler = endpoint(async ({ url }) => {
	const q = readQuery(url, pinListQuery);
	return json(await listAllPins(q.limit, q.offset));
});
