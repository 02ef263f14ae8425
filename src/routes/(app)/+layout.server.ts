import { redirect } from '@sveltejs/kit';
import { actions, can } from '$lib/permissions';
import { usesCatcher } from '$server/mail';
import type { LayoutServerLoad } from './$types';

export const load = (({ locals, url }) => {
	const user = locals.user;
	if (!user) redirect(303, `/sign-in?next=${encodeURIComponent(url.pathname + url.search)}`);
	return {
		user,
		allowed: actions.filter((a) => can(user.role, a)),
		devMail: usesCatcher()
	};
}) satisfies LayoutServerLoad;
