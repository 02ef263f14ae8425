import { json } from '@sveltejs/kit';
import { ApiError, endpoint } from '$server/api';
import { getRun } from '$server/ingest/read';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint(async ({ params }) => {
	const run = await getRun(params.id);
	if (!run) throw new ApiError('not_found', 'No such run');
	return json({ run });
});
