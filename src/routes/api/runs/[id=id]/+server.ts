import { json } from '@sveltejs/kit';
import type { RunResponse } from '$lib/api-types';
import { ApiError, endpoint } from '$server/api';
import { getRun } from '$server/runs';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint(async ({ params }) => {
	const run = await getRun(params.id);
	if (!run) throw new ApiError('not_found', 'No such run');
	return json({ run } satisfies RunResponse);
});
