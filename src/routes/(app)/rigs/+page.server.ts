import { redirect } from '@sveltejs/kit';
import { can } from '$lib/permissions';
import { createRigSchema } from '$lib/validation/rigs';
import { actorOf } from '$server/api';
import { parseForm } from '$server/forms';
import { createRig, listRigs } from '$server/rigs';
import { rigsFormFailure } from '$server/rigs/http';
import type { Actions, PageServerLoad } from './$types';

export const load = (async ({ locals }) => {
	return { rigs: await listRigs(), canManage: can(locals.user?.role, 'rigs:manage') };
}) satisfies PageServerLoad;

export const actions = {
	create: async ({ request, locals, getClientAddress }) => {
		const parsed = await parseForm(request, createRigSchema);
		if (!parsed.ok) return parsed.failure;
		let id: string;
		try {
			id = (await createRig(actorOf(locals, getClientAddress()), parsed.data)).id;
		} catch (err) {
			return rigsFormFailure(err, { name: parsed.data.name, description: parsed.data.description });
		}
		redirect(303, `/rigs/${id}`);
	}
} satisfies Actions;
