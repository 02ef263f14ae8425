import { redirect } from '@sveltejs/kit';
import { audit } from '$server/auth/audit';
import { blankSessionCookie, invalidateSession } from '$server/auth/sessions';
import type { Actions, PageServerLoad } from './$types';

export const load = (({ locals }) => {
	if (!locals.user) redirect(303, '/sign-in');
	return {};
}) satisfies PageServerLoad;

export const actions = {
	default: async ({ locals, cookies, url, getClientAddress }) => {
		if (locals.session && locals.user) {
			await invalidateSession(locals.session.id);
			await audit(
				{ id: locals.user.id, label: locals.user.email, ip: getClientAddress() },
				'signout',
				locals.user.email
			);
		}
		const c = blankSessionCookie(url.protocol === 'https:');
		cookies.set(c.name, c.value, c.attributes);
		redirect(303, '/sign-in');
	}
} satisfies Actions;
