/** Query parameters of the metrics endpoint. */
import { z } from 'zod';

const seq = z.coerce
	.number({ error: 'must be a number' })
	.int('must be an integer')
	.min(0, 'must be ≥ 0');
const finite = z.coerce
	.number({ error: 'must be a number' })
	.refine(Number.isFinite, 'must be a finite number');

export const metricsQuery = z
	.object({
		/** GOSPA/OSPA cut-off for this request only (run length unit) */
		c: finite.refine((v) => v > 0, 'c must be above 0').optional(),
		/** GOSPA/OSPA order for this request only */
		p: finite.refine((v) => v >= 1, 'p must be at least 1').optional(),
		from_seq: seq.optional(),
		to_seq: seq.optional(),
		limit: z.coerce
			.number({ error: 'must be a number' })
			.int('must be an integer')
			.min(1, 'limit must be 1..1000000')
			.max(1_000_000, 'limit must be 1..1000000')
			.optional(),
		/** overrides the Accept header, for plain download links */
		format: z.enum(['json', 'csv'], { error: 'format must be json or csv' }).optional()
	})
	.refine((q) => q.from_seq === undefined || q.to_seq === undefined || q.from_seq <= q.to_seq, {
		path: ['to_seq'],
		message: 'to_seq must be ≥ from_seq'
	});
export type MetricsQuery = z.infer<typeof metricsQuery>;
