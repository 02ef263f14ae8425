import { json } from '@sveltejs/kit';
import { createKeySchema } from '$lib/validation/rigs';
import { ApiError, actorOf, readJson } from '$server/api';
import { createFeedKey, getRig, listFeedKeys } from '$server/rigs';
import { rigsEndpoint } from '$server/rigs/http';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = rigsEndpoint(async ({ params }) => {
	if (!(await getRig(params.id))) throw new ApiError('not_found', 'No such rig');
	return json({ keys: await listFeedKeys(params.id) });
});

/** `{label?, expiresAt?}`; the answer is the only place the secret ever appears. */
export const POST: RequestHandler = rigsEndpoint(
	async ({ params, request, locals, getClientAddress }) => {
		const input = await readJson(request, createKeySchema);
		const { key, secret } = await createFeedKey(
			actorOf(locals, getClientAddress()),
			params.id,
			input
		);
		return json(
			{
				key: { id: key.id, prefix: key.prefix, label: key.label, expiresAt: key.expiresAt, secret }
			},
			{ status: 201 }
		);
	}
);
