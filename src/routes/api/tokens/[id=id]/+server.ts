import { actorOf, endpoint } from '$server/api';
import { revokeApiToken } from '$server/people';
import type { RequestHandler } from './$types';

export const DELETE: RequestHandler = endpoint(async ({ params, locals, getClientAddress }) => {
	await revokeApiToken(actorOf(locals, getClientAddress()), locals.user!.id, params.id);
	return new Response(null, { status: 204 });
});
