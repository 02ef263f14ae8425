/**
 * One feed key. Revoking is `POST /api/keys/{id}/revoke`, not DELETE: a revoked key stays listed (with its
 * last use and frame count) for the audit trail, so nothing is deleted.
 */
import { json } from '@sveltejs/kit';
import { labelKeySchema } from '$lib/validation/rigs';
import { ApiError, actorOf, readJson } from '$server/api';
import { getFeedKey, labelFeedKey } from '$server/rigs';
import { rigsEndpoint } from '$server/rigs/http';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = rigsEndpoint(async ({ params }) => {
	const key = await getFeedKey(params.id);
	if (!key) throw new ApiError('not_found', 'No such feed key');
	return json({ key });
});

export const PATCH: RequestHandler = rigsEndpoint(
	async ({ params, request, locals, getClientAddress }) => {
		const input = await readJson(request, labelKeySchema);
		return json({
			key: await labelFeedKey(actorOf(locals, getClientAddress()), params.id, input.label)
		});
	}
);
