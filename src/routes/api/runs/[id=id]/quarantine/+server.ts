import { json } from '@sveltejs/kit';
import type { QuarantineResponse } from '$lib/api-types';
import { pageQuery } from '$lib/validation/runs';
import { ApiError, endpoint } from '$server/api';
import { getRun } from '$server/runs';
import { readQuarantine } from '$server/runs/frames';
import { readQuery } from '$server/query';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint(async ({ params, url }) => {
	const q = readQuery(url, pageQuery);
	if (!(await getRun(params.id))) throw new ApiError('not_found', 'No such run');
	return json({
		quarantine: await readQuarantine(params.id, q.limit, q.offset)
	} satisfies QuarantineResponse);
});
