import { error, fail } from '@sveltejs/kit';
import { can } from '$lib/permissions';
import { newPinSchema, pinViewSchema } from '$lib/validation/runs';
import { fieldErrors } from '$lib/validation/people';
import { formError } from '$server/forms';
import { getRun } from '$server/runs';
import { createPin, listRunPins, PinError } from '$server/pins';
import type { Actions, PageServerLoad } from './$types';

export const load = (async ({ params, locals }) => {
	const [run, pins] = await Promise.all([getRun(params.id), listRunPins(params.id)]);
	if (!run) error(404, 'No such run');
	return {
		run: {
			id: run.id,
			name: run.name,
			rigName: run.rig_name,
			status: run.status,
			stateFields: run.state_fields,
			measurementFields: run.measurement_fields,
			coords: run.coords,
			lengthUnit: run.length_unit,
			firstT: run.first_t,
			lastT: run.last_t,
			duration: run.duration_s ?? 0,
			frameCount: run.frame_count,
			frameRate: run.frame_rate_hz,
			metricSettings: run.metric_settings
		},
		pins: pins.map((p) => ({ ...p, created_at: new Date(p.created_at).toISOString() })),
		canPin: can(locals.user?.role, 'pins:create')
	};
}) satisfies PageServerLoad;

export const actions = {
	pin: async ({ request, params, locals }) => {
		const form = await request.formData();
		const raw: Record<string, string> = {};
		for (const [k, v] of form) if (typeof v === 'string') raw[k] = v;
		let view: unknown = null;
		try {
			view = JSON.parse(raw.view ?? 'null');
		} catch {
			view = null;
		}
		const parsed = newPinSchema.safeParse({
			...raw,
			view: pinViewSchema.safeParse(view).success ? view : undefined
		});
		if (!parsed.success) return fail(400, { errors: fieldErrors(parsed.error), values: raw });
		try {
			const pin = await createPin(params.id, locals.user!.id, parsed.data);
			return { pinned: { id: pin.id, title: pin.title } };
		} catch (err) {
			if (err instanceof PinError) return formError(400, err.message, err.field, raw);
			throw err;
		}
	}
} satisfies Actions;
