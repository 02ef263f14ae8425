import { json } from '@sveltejs/kit';
import type { RunSettingsResponse } from '$lib/api-types';
import { defaultMetricSettings } from '$lib/metrics';
import { ApiError, endpoint } from '$server/api';
import { saveSettingsAndRecompute } from '$server/metrics/jobs';
import { metricRun } from '$server/metrics/run';
import { checkSettings, recomputeStatus } from '$server/metrics/settings';
import type { RequestHandler } from './$types';

async function runOr404(id: string) {
	const run = await metricRun(id);
	if (!run) throw new ApiError('not_found', 'No such run');
	return run;
}

/** The run's metric settings (defaults when none were saved) and where the last recompute stands. */
export const GET: RequestHandler = endpoint(async ({ params }) => {
	const run = await runOr404(params.id);
	return json({
		settings: run.settings,
		defaults: defaultMetricSettings,
		state_fields: run.stateFields,
		unit: run.lengthUnit,
		recompute: await recomputeStatus(run.id)
	} satisfies RunSettingsResponse);
});

/** Replaces the settings and queues a recompute of the run's stored metric columns. */
export const PUT: RequestHandler = endpoint(async ({ params, request }) => {
	const run = await runOr404(params.id);
	let body: unknown;
	try {
		body = await request.json();
	} catch {
		throw new ApiError('bad_request', 'The body must be JSON');
	}
	const checked = checkSettings(body, run.stateFields);
	if (!checked.ok) throw new ApiError('invalid', 'Some settings are not valid', checked.errors);
	await saveSettingsAndRecompute(run.id, checked.settings);
	return json({
		settings: checked.settings,
		recompute: await recomputeStatus(run.id)
	} satisfies Pick<RunSettingsResponse, 'settings' | 'recompute'>);
});
