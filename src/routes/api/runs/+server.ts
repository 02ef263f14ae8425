import { json } from '@sveltejs/kit';
import type { RunList } from '$lib/api-types';
import { runSearchQuery } from '$lib/validation/runs';
import { endpoint } from '$server/api';
import { searchRuns } from '$server/runs';
import { readQuery } from '$server/query';
import type { RequestHandler } from './$types';

/** Runs, live first; filter by rig, status, tag, start date (since/until) and text (q); sort and dir; limit/offset. */
export const GET: RequestHandler = endpoint(async ({ url }) => {
	const q = readQuery(url, runSearchQuery);
	return json((await searchRuns({ ...q, rigId: q.rig })) satisfies RunList);
});
