import { redirect } from '@sveltejs/kit';
import { resetSchema } from '$lib/validation/people';
import { formError, parseForm } from '$server/forms';
import { completePasswordReset, findOpenReset, PeopleError } from '$server/people';
import type { Actions, PageServerLoad } from './$types';

export const load = (async ({ params }) => {
	return { valid: (await findOpenReset(params.token)) !== null };
}) satisfies PageServerLoad;

export const actions = {
	default: async ({ request, params, getClientAddress }) => {
		const parsed = await parseForm(request, resetSchema);
		if (!parsed.ok) return parsed.failure;
		try {
			await completePasswordReset(params.token, parsed.data.password, getClientAddress());
		} catch (err) {
			if (err instanceof PeopleError) return formError(400, err.message);
			throw err;
		}
		redirect(303, '/sign-in?reset=1');
	}
} satisfies Actions;
