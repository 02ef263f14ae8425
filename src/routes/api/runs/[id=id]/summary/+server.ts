import { json } from '@sveltejs/kit';
import { ApiError, endpoint } from '$server/api';
import { metricRun } from '$server/metrics/run';
import { runSummary, summaryUnits } from '$server/metrics/summary';
import type { RequestHandler } from './$types';

/**
 * Run-level figures with their units, from the cache in runs.summary while it matches the run's
 * settings and frames; otherwise computed from the frames first (`recomputed: true`).
 */
export const GET: RequestHandler = endpoint(async ({ params }) => {
	const run = await metricRun(params.id);
	if (!run) throw new ApiError('not_found', 'No such run');
	const { cached, fresh } = await runSummary(run);
	return json({
		run_id: run.id,
		units: summaryUnits(run.lengthUnit, cached.settings.p),
		settings: cached.settings,
		computed_at: cached.computed_at,
		recomputed: fresh,
		frames: cached.frames,
		summary: cached.summary
	});
});
