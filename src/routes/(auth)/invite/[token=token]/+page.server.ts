import { redirect } from '@sveltejs/kit';
import { acceptInviteSchema } from '$lib/validation/people';
import { createSession, sessionCookie } from '$server/auth/sessions';
import { formError, parseForm } from '$server/forms';
import { acceptInvite, findOpenInvite, PeopleError } from '$server/people';
import type { Actions, PageServerLoad } from './$types';

export const load = (async ({ params }) => {
	const invite = await findOpenInvite(params.token);
	return { invite: invite ? { email: invite.email, role: invite.role } : null };
}) satisfies PageServerLoad;

export const actions = {
	default: async ({ request, params, cookies, url, getClientAddress }) => {
		const parsed = await parseForm(request, acceptInviteSchema);
		if (!parsed.ok) return parsed.failure;
		const ip = getClientAddress();
		let userId: string;
		try {
			userId = (await acceptInvite(params.token, parsed.data.name, parsed.data.password, ip)).id;
		} catch (err) {
			if (err instanceof PeopleError)
				return formError(400, err.message, '_', { name: parsed.data.name });
			throw err;
		}
		const session = await createSession(userId, {
			ip,
			userAgent: request.headers.get('user-agent')
		});
		const c = sessionCookie(session.id, url.protocol === 'https:');
		cookies.set(c.name, c.value, c.attributes);
		redirect(303, '/runs');
	}
} satisfies Actions;
