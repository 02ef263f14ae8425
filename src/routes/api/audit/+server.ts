import { json } from '@sveltejs/kit';
import { z } from 'zod';
import { ApiError, endpoint } from '$server/api';
import { readAudit } from '$server/audit-read';
import type { RequestHandler } from './$types';

const query = z.object({
	limit: z.coerce.number().int().min(1).max(1000).default(100),
	before: z.coerce.number().int().positive().optional()
});

export const GET: RequestHandler = endpoint(async ({ url }) => {
	const parsed = query.safeParse(Object.fromEntries(url.searchParams));
	if (!parsed.success)
		throw new ApiError('invalid', 'limit must be 1..1000 and before a positive id');
	return json({ entries: await readAudit(parsed.data.limit, parsed.data.before) });
});
