import { error, fail } from '@sveltejs/kit';
import { defaultMetricSettings } from '$lib/metrics';
import { can } from '$lib/permissions';
import { saveSettingsAndRecompute } from '$server/metrics/jobs';
import { metricRun } from '$server/metrics/run';
import { checkSettings, recomputeStatus } from '$server/metrics/settings';
import { freshSummary, runSummary, summaryUnits } from '$server/metrics/summary';
import { draftFromForm, draftOf, inputOf } from './settings-form';
import type { Actions, PageServerLoad } from './$types';

/** frames summarised in about half a second (bench:metrics, decode + metrics ≈ 60 µs a frame) */
const SHORT_RUN_FRAMES = 10_000;

export const load = (async ({ params, locals }) => {
	const [run, recompute] = await Promise.all([metricRun(params.id), recomputeStatus(params.id)]);
	if (!run) error(404, 'No such run');
	const figures = runSummary(run).then(({ cached }) => ({
		summary: cached.summary,
		units: summaryUnits(run.lengthUnit, cached.settings.p),
		computedAt: cached.computed_at
	}));
	// Summarising a long run takes seconds: then the page streams the figures in. A streamed page
	// always answers 200 though, so when the figures are at hand (cached, or a short run) they are awaited.
	const ready = run.frameCount <= SHORT_RUN_FRAMES || (await freshSummary(run)) !== null;
	const summary = ready ? await figures : figures;
	return {
		run: {
			id: run.id,
			name: run.name,
			status: run.status,
			stateFields: run.stateFields,
			lengthUnit: run.lengthUnit,
			frames: run.frameCount
		},
		draft: draftOf(run.settings),
		defaults: draftOf(defaultMetricSettings),
		recompute,
		canConfigure: can(locals.user?.role, 'runs:configure'),
		summary
	};
}) satisfies PageServerLoad;

export const actions = {
	settings: async ({ request, params }) => {
		const run = await metricRun(params.id);
		if (!run) return fail(404, { errors: { _: 'No such run' }, draft: null });
		const draft = draftFromForm(await request.formData());
		const { input, errors } = inputOf(draft);
		const checked = checkSettings(input, run.stateFields);
		if (!checked.ok || Object.keys(errors).length > 0) {
			return fail(400, { errors: { ...(checked.ok ? {} : checked.errors), ...errors }, draft });
		}
		await saveSettingsAndRecompute(run.id, checked.settings);
		return { saved: true };
	}
} satisfies Actions;
