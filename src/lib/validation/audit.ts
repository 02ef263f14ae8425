import { z } from 'zod';

/** Query of GET /api/audit: the newest entries first, `before` an entry id to page back from. */
export const auditQuery = z.object({
	limit: z.coerce.number().int().min(1).max(1000).default(100),
	before: z.coerce.number().int().positive().optional()
});
