import { z } from 'zod';
import { intParam } from './query-fields';

/** /api/audit and the audit log page: newest first, `before` an entry id to page back. */
export const auditQuery = z.object({
	limit: intParam('limit', 1, 1000).default(100),
	before: intParam('before', 1).optional()
});

/** The audit log page shows a fixed 200 entries; it pages back with `before` alone. */
export const auditPageQuery = auditQuery.omit({ limit: true });
