import { json } from '@sveltejs/kit';
import { inviteSchema } from '$lib/validation/people';
import { actorOf, endpoint, readJson } from '$server/api';
import { publicUrl, sendMail } from '$server/mail';
import { inviteMail } from '$server/mail/templates';
import { createInvite, listPeople } from '$server/people';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint(async () => json({ people: await listPeople() }));

/** Invites a person by e-mail with a role. */
export const POST: RequestHandler = endpoint(async ({ request, locals, getClientAddress }) => {
	const input = await readJson(request, inviteSchema);
	const invite = await createInvite(actorOf(locals, getClientAddress()), input.email, input.role);
	const link = publicUrl(`/invite/${invite.token}`);
	await sendMail({
		to: input.email,
		kind: 'invite',
		...inviteMail(link, input.role, locals.user!.name, invite.expiresAt)
	});
	return json(
		{
			invite: { id: invite.id, email: input.email, role: input.role, expiresAt: invite.expiresAt }
		},
		{ status: 201 }
	);
});
