import { json } from '@sveltejs/kit';
import { patchPersonSchema } from '$lib/validation/people';
import { ApiError, actorOf, endpoint, readJson } from '$server/api';
import { getUser, setActive, setRole } from '$server/people';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint(async ({ params }) => {
	const user = await getUser(params.id);
	if (!user) throw new ApiError('not_found', 'No such person');
	const { passwordHash: _omit, ...visible } = user;
	return json({ person: visible });
});

export const PATCH: RequestHandler = endpoint(
	async ({ params, request, locals, getClientAddress }) => {
		const input = await readJson(request, patchPersonSchema);
		const actor = actorOf(locals, getClientAddress());
		if (input.active === false && params.id === locals.user!.id)
			throw new ApiError('invalid', 'You cannot deactivate yourself');
		if (!(await getUser(params.id))) throw new ApiError('not_found', 'No such person');
		if (input.role !== undefined) await setRole(actor, params.id, input.role);
		if (input.active !== undefined) await setActive(actor, params.id, input.active);
		const { passwordHash: _omit, ...visible } = (await getUser(params.id))!;
		return json({ person: visible });
	}
);
