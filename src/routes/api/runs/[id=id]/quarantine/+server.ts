import { json } from '@sveltejs/kit';
import { pageQuery } from '$lib/validation/runs';
import { ApiError, endpoint } from '$server/api';
import { getRun, readQuarantine } from '$server/ingest/read';
import { readQuery } from '$server/query';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint(async ({ params, url }) => {
	const q = readQuery(url, pageQuery);
	if (!(await getRun(params.id))) throw new ApiError('not_found', 'No such run');
	return json({ quarantine: await readQuarantine(params.id, q.limit, q.offset) });
});
