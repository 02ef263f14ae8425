import { runFacets } from '$server/runs';
import type { PageServerLoad } from './$types';

/** Only the filter choices; the table itself is fetched by the browser from /api/runs. */
export const load = (async () => ({ facets: await runFacets() })) satisfies PageServerLoad;
