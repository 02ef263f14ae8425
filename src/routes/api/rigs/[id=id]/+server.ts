import { json } from '@sveltejs/kit';
import { patchRigSchema } from '$lib/validation/rigs';
import { ApiError, actorOf, readJson } from '$server/api';
import { getRig, listFeedKeys, updateRig } from '$server/rigs';
import { rigsEndpoint } from '$server/rigs/http';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = rigsEndpoint(async ({ params }) => {
	const rig = await getRig(params.id);
	if (!rig) throw new ApiError('not_found', 'No such rig');
	return json({ rig, keys: await listFeedKeys(rig.id) });
});

/** Any of name, description, archived (archiving stops the rig's keys at once). */
export const PATCH: RequestHandler = rigsEndpoint(
	async ({ params, request, locals, getClientAddress }) => {
		const input = await readJson(request, patchRigSchema);
		return json({ rig: await updateRig(actorOf(locals, getClientAddress()), params.id, input) });
	}
);
