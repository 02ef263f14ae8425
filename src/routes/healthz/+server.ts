import { json } from '@sveltejs/kit';
import { pingDatabase } from '$server/db';
import { checkHealth } from '$server/health';
import type { RequestHandler } from './$types';

const words = { database: ['reachable', 'unreachable'] } as Record<string, [string, string]>;

/**
 * For a load balancer or supervisor: 200 when the database answers and every part of the process works
 * (ingest: feed key checks, storage and revocations; live: viewer sign-in and runs), else 503 naming what
 * does not, e.g. {"status":"unavailable","database":"reachable","ingest":"unavailable","live":"ok",…}.
 */
export const GET: RequestHandler = async () => {
	const parts = await checkHealth({
		database: async () => {
			await pingDatabase();
			return null;
		}
	});
	const problems = Object.entries(parts).filter(([, p]) => p !== null);
	const body: Record<string, unknown> = { status: problems.length ? 'unavailable' : 'ok' };
	for (const [name, problem] of Object.entries(parts)) {
		const [up, down] = words[name] ?? ['ok', 'unavailable'];
		body[name] = problem === null ? up : down;
	}
	if (problems.length) {
		const message = problems.map(([name, p]) => `${name}: ${p}`).join('; ');
		body.error = { code: 'unavailable', message };
	}
	return json(body, {
		status: problems.length ? 503 : 200,
		headers: { 'cache-control': 'no-store' }
	});
};
