import { json } from '@sveltejs/kit';
import { rotateKeySchema } from '$lib/validation/rigs';
import { actorOf, readJson } from '$server/api';
import { rotateFeedKey } from '$server/rigs';
import { rigsEndpoint } from '$server/rigs/http';
import type { RequestHandler } from './$types';

/** `{grace_minutes}` (0..10080): the new key's secret comes back once; the old key works until the grace ends. */
export const POST: RequestHandler = rigsEndpoint(
	async ({ params, request, locals, getClientAddress }) => {
		const input = await readJson(request, rotateKeySchema);
		const { key, secret, previous } = await rotateFeedKey(
			actorOf(locals, getClientAddress()),
			params.id,
			input.grace_minutes
		);
		return json(
			{
				key: { id: key.id, prefix: key.prefix, label: key.label, expiresAt: key.expiresAt, secret },
				previous
			},
			{ status: 201 }
		);
	}
);
