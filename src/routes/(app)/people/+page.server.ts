import { z } from 'zod';
import { can } from '$lib/permissions';
import { inviteSchema, setRoleSchema } from '$lib/validation/people';
import { actorOf } from '$server/api';
import { formError, parseForm } from '$server/forms';
import { publicUrl, sendMail } from '$server/mail';
import { inviteMail } from '$server/mail/templates';
import {
	createInvite,
	listInvites,
	listPeople,
	PeopleError,
	revokeInvite,
	setActive,
	setRole
} from '$server/people';
import type { Actions, PageServerLoad } from './$types';

export const load = (async ({ locals }) => {
	const [people, invites] = await Promise.all([listPeople(), listInvites()]);
	return {
		people,
		invites,
		canManage: can(locals.user?.role, 'people:manage'),
		me: locals.user!.id
	};
}) satisfies PageServerLoad;

const idSchema = z.object({ id: z.string().regex(/^[A-Za-z0-9_-]{20}$/, 'Unknown person') });

function domainFailure(err: unknown) {
	if (err instanceof PeopleError)
		return formError(
			err.code === 'not_found' ? 404 : err.code === 'conflict' ? 409 : 400,
			err.message,
			err.field ?? '_'
		);
	throw err;
}

export const actions = {
	invite: async ({ request, locals, getClientAddress }) => {
		const parsed = await parseForm(request, inviteSchema);
		if (!parsed.ok) return parsed.failure;
		const actor = actorOf(locals, getClientAddress());
		try {
			const invite = await createInvite(actor, parsed.data.email, parsed.data.role);
			const link = publicUrl(`/invite/${invite.token}`);
			await sendMail({
				to: parsed.data.email,
				kind: 'invite',
				...inviteMail(link, parsed.data.role, locals.user!.name, invite.expiresAt)
			});
			return { invited: parsed.data.email };
		} catch (err) {
			return domainFailure(err);
		}
	},
	role: async ({ request, locals, getClientAddress }) => {
		const parsed = await parseForm(request, idSchema.and(setRoleSchema));
		if (!parsed.ok) return parsed.failure;
		try {
			await setRole(actorOf(locals, getClientAddress()), parsed.data.id, parsed.data.role);
			return { updated: parsed.data.id };
		} catch (err) {
			return domainFailure(err);
		}
	},
	active: async ({ request, locals, getClientAddress }) => {
		const parsed = await parseForm(
			request,
			idSchema.and(
				z.object({ active: z.enum(['true', 'false'], { error: 'active must be true or false' }) })
			)
		);
		if (!parsed.ok) return parsed.failure;
		if (parsed.data.id === locals.user!.id && parsed.data.active === 'false')
			return formError(400, 'You cannot deactivate yourself');
		try {
			await setActive(
				actorOf(locals, getClientAddress()),
				parsed.data.id,
				parsed.data.active === 'true'
			);
			return { updated: parsed.data.id };
		} catch (err) {
			return domainFailure(err);
		}
	},
	revokeInvite: async ({ request, locals, getClientAddress }) => {
		const parsed = await parseForm(request, idSchema);
		if (!parsed.ok) return parsed.failure;
		try {
			await revokeInvite(actorOf(locals, getClientAddress()), parsed.data.id);
			return { updated: parsed.data.id };
		} catch (err) {
			return domainFailure(err);
		}
	}
} satisfies Actions;
