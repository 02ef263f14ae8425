/**
 * The query parameters of every list endpoint, by route id: what the endpoints validate with (through
 * `readQuery`), what the API document describes, and what tests/integration/query-params.test.ts walks with bad
 * values. A route that reads its query string and is missing here fails that test.
 */
import type { z } from 'zod';
import { auditPageQuery, auditQuery } from './audit';
import { metricsQuery } from './metrics';
import { frameQuery, pageQuery, pinListQuery, runSearchQuery, seriesQuery } from './runs';

export const listQueries = {
	'/api/runs': runSearchQuery,
	'/api/pins': pinListQuery,
	'/api/audit': auditQuery,
	'/api/runs/[id=id]/frames': frameQuery,
	'/api/runs/[id=id]/quarantine': pageQuery,
	'/api/runs/[id=id]/series': seriesQuery,
	'/api/runs/[id=id]/metrics': metricsQuery
} as const satisfies Record<string, z.ZodObject>;

/** Pages that read query parameters, with the schema they read them with. */
export const pageQueries = {
	'/(app)/runs': runSearchQuery,
	'/(app)/settings/audit': auditPageQuery
} as const satisfies Record<string, z.ZodObject>;
