import { error } from '@sveltejs/kit';
import { auditPageQuery } from '$lib/validation/audit';
import { readAudit } from '$server/audit-read';
import { checkQuery } from '$server/query';
import type { PageServerLoad } from './$types';

export const load = (async ({ url }) => {
	const q = checkQuery(url, auditPageQuery);
	if (!q.ok) error(400, q.message);
	return { entries: await readAudit(200, q.data.before) };
}) satisfies PageServerLoad;
