import { json } from '@sveltejs/kit';
import type { SeriesResponse } from '$lib/api-types';
import { seriesQuery } from '$lib/validation/runs';
import { ApiError, endpoint } from '$server/api';
import { getRun } from '$server/runs';
import { readSeries } from '$server/runs/frames';
import { readQuery } from '$server/query';
import type { RequestHandler } from './$types';

/** The metric columns downsampled to `buckets` time buckets (min, max, mean); from/to in seconds from run start. */
export const GET: RequestHandler = endpoint(async ({ params, url }) => {
	const q = readQuery(url, seriesQuery);
	const run = await getRun(params.id);
	if (!run) throw new ApiError('not_found', 'No such run');
	const duration = run.duration_s ?? 0;
	if (run.first_t === null) return json({ series: null } satisfies SeriesResponse);
	const from = Math.max(0, q.from ?? 0);
	const to = Math.max(from + 1e-3, q.to ?? duration);
	return json({
		series: await readSeries(params.id, run.first_t, from, to, q.buckets)
	} satisfies SeriesResponse);
});
