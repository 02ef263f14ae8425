import { json } from '@sveltejs/kit';
import { tokenNameSchema } from '$lib/validation/people';
import { actorOf, endpoint, readJson } from '$server/api';
import { createApiToken, listApiTokens } from '$server/people';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint(async ({ locals }) =>
	json({ tokens: await listApiTokens(locals.user!.id) })
);

export const POST: RequestHandler = endpoint(async ({ request, locals, getClientAddress }) => {
	const input = await readJson(request, tokenNameSchema);
	const created = await createApiToken(
		actorOf(locals, getClientAddress()),
		locals.user!.id,
		input.name
	);
	return json(
		{ token: { id: created.id, name: input.name, secret: created.token } },
		{ status: 201 }
	);
});
