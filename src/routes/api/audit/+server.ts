import { json } from '@sveltejs/kit';
import { auditQuery } from '$lib/validation/audit';
import { ApiError, endpoint } from '$server/api';
import { readAudit } from '$server/audit-read';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint(async ({ url }) => {
	const parsed = auditQuery.safeParse(Object.fromEntries(url.searchParams));
	if (!parsed.success)
		throw new ApiError('invalid', 'limit must be 1..1000 and before a positive id');
	return json({ entries: await readAudit(parsed.data.limit, parsed.data.before) });
});
