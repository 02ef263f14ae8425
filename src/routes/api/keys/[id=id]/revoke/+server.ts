import { json } from '@sveltejs/kit';
import { actorOf } from '$server/api';
import { revokeFeedKey } from '$server/rigs';
import { rigsEndpoint } from '$server/rigs/http';
import type { RequestHandler } from './$types';

/** No body. Open sockets on the key are told within the revoking transaction's commit. */
export const POST: RequestHandler = rigsEndpoint(async ({ params, locals, getClientAddress }) =>
	json({ key: await revokeFeedKey(actorOf(locals, getClientAddress()), params.id) })
);
