import { json } from '@sveltejs/kit';
import { actions, can } from '$lib/permissions';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = ({ locals }) => {
	const user = locals.user!;
	return json({ user, via: locals.via, allowed: actions.filter((a) => can(user.role, a)) });
};
