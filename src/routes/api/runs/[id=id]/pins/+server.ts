import { json } from '@sveltejs/kit';
import { newPinSchema } from '$lib/validation/runs';
import { ApiError, endpoint, readJson } from '$server/api';
import { getRun } from '$server/runs';
import { createPin, listRunPins, PinError } from '$server/pins';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint(async ({ params }) => {
	if (!(await getRun(params.id))) throw new ApiError('not_found', 'No such run');
	return json({ pins: await listRunPins(params.id) });
});

/** Pins a moment (t in seconds from run start) with its view; marks the run kept. */
export const POST: RequestHandler = endpoint(async ({ params, request, locals }) => {
	const body = await readJson(request, newPinSchema);
	if (!(await getRun(params.id))) throw new ApiError('not_found', 'No such run');
	try {
		const pin = await createPin(params.id, locals.user!.id, body);
		return json({ pin }, { status: 201 });
	} catch (err) {
		if (err instanceof PinError)
			throw new ApiError('invalid', err.message, { [err.field]: err.message });
		throw err;
	}
});
