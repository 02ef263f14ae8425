import { z } from 'zod';

const seq = z.coerce.number({ error: 'must be a number' }).int('must be an integer').min(0, 'must be ≥ 0');
const time = z.coerce.number({ error: 'must be a number' }).refine(Number.isFinite, 'must be finite');

export const runListQuery = z.object({
	rig: z.uuid({ error: 'rig must be a rig id' }).optional(),
	status: z.enum(['live', 'ended', 'interrupted', 'imported'], { error: 'status must be live, ended, interrupted or imported' }).optional(),
	limit: z.coerce.number().int().min(1).max(500).default(50),
	offset: z.coerce.number().int().min(0).default(0)
});

export const frameQuery = z
	.object({
		from_seq: seq.optional(),
		to_seq: seq.optional(),
		from: time.optional(),
		to: time.optional(),
		limit: z.coerce.number().int().min(1, 'limit must be 1..5000').max(5000, 'limit must be 1..5000').default(500)
	})
	.refine((q) => q.from_seq === undefined || q.to_seq === undefined || q.from_seq <= q.to_seq, { path: ['to_seq'], message: 'to_seq must be ≥ from_seq' })
	.refine((q) => q.from === undefined || q.to === undefined || q.from <= q.to, { path: ['to'], message: 'to must be ≥ from' });

export const pageQuery = z.object({
	limit: z.coerce.number().int().min(1).max(1000).default(100),
	offset: z.coerce.number().int().min(0).default(0)
});
