import { error } from '@sveltejs/kit';
import { runSearchQuery } from '$lib/validation/runs';
import { runFacets } from '$server/runs';
import { checkQuery } from '$server/query';
import type { PageServerLoad } from './$types';

/** Only the filter choices; the table itself is fetched by the browser from /api/runs (same parameters). */
export const load = (async ({ url }) => {
	const q = checkQuery(url, runSearchQuery);
	if (!q.ok) error(400, q.message);
	return { facets: await runFacets() };
}) satisfies PageServerLoad;
