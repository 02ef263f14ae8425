import { json } from '@sveltejs/kit';
import { sqlClient } from '$server/db';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = async () => {
	try {
		await sqlClient()`select 1`;
		return json({ status: 'ok', database: 'reachable' });
	} catch (err) {
		return json(
			{
				status: 'unavailable',
				database: 'unreachable',
				error: { code: 'unavailable', message: err instanceof Error ? err.message : String(err) }
			},
			{ status: 503 }
		);
	}
};
