/** Query parameters of the per-frame metrics endpoint (/api/runs/{id}/metrics). */
import { z } from 'zod';
import { intParam, seqParam } from './query-fields';

const finite = (name: string) =>
	z.coerce
		.number({ error: `${name} must be a number` })
		.refine(Number.isFinite, `${name} must be a finite number`);

export const metricsQuery = z
	.object({
		/** GOSPA/OSPA cut-off for this request only (run length unit) */
		c: finite('c')
			.refine((v) => v > 0, 'c must be above 0')
			.refine((v) => v <= 1e9, 'c must be at most 1e9')
			.optional(),
		/** GOSPA/OSPA order for this request only */
		p: finite('p')
			.refine((v) => v >= 1, 'p must be at least 1')
			.refine((v) => v <= 1000, 'p must be at most 1000')
			.optional(),
		from_seq: seqParam('from_seq').optional(),
		to_seq: seqParam('to_seq').optional(),
		limit: intParam('limit', 1, 1_000_000).optional(),
		/** overrides the Accept header, for plain download links */
		format: z.enum(['json', 'csv'], { error: 'format must be json or csv' }).optional()
	})
	.refine((q) => q.from_seq === undefined || q.to_seq === undefined || q.from_seq <= q.to_seq, {
		path: ['to_seq'],
		message: 'to_seq must be ≥ from_seq'
	});
export type MetricsQuery = z.infer<typeof metricsQuery>;
