import { json } from '@sveltejs/kit';
import { auditQuery } from '$lib/validation/audit';
import { endpoint } from '$server/api';
import { readAudit } from '$server/audit-read';
import { readQuery } from '$server/query';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint(async ({ url }) => {
	const q = readQuery(url, auditQuery);
	return json({ entries: await readAudit(q.limit, q.before) });
});
