import { json } from '@sveltejs/kit';
import { runListQuery } from '$lib/validation/runs';
import { endpoint } from '$server/api';
import { listRuns } from '$server/ingest/read';
import { readQuery } from '$server/query';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint(async ({ url }) => {
	const q = readQuery(url, runListQuery);
	return json(await listRuns({ rigId: q.rig, status: q.status, limit: q.limit, offset: q.offset }));
});
