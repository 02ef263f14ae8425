import { readAudit } from '$server/audit-read';
import type { PageServerLoad } from './$types';

export const load = (async ({ url }) => {
	const before = Number(url.searchParams.get('before'));
	const entries = await readAudit(
		200,
		Number.isSafeInteger(before) && before > 0 ? before : undefined
	);
	return { entries };
}) satisfies PageServerLoad;
