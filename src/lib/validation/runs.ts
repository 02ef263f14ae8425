import { z } from 'zod';
import { COORDS, RUN_STATUSES } from '$lib/runs';
import { dayParam, intParam, secondsParam, seqParam, textParam } from './query-fields';

export const runListQuery = z.object({
	rig: z.uuid({ error: 'rig must be a rig id' }).optional(),
	status: z
		.enum(RUN_STATUSES, {
			error: 'status must be live, ended, interrupted or imported'
		})
		.optional(),
	limit: intParam('limit', 1, 500).default(50),
	offset: intParam('offset', 0).default(0)
});

export const frameQuery = z
	.object({
		from_seq: seqParam('from_seq').optional(),
		to_seq: seqParam('to_seq').optional(),
		from: secondsParam('from').optional(),
		to: secondsParam('to').optional(),
		limit: intParam('limit', 1, 5000).default(500)
	})
	.refine((q) => q.from_seq === undefined || q.to_seq === undefined || q.from_seq <= q.to_seq, {
		path: ['to_seq'],
		message: 'to_seq must be ≥ from_seq'
	})
	.refine((q) => q.from === undefined || q.to === undefined || q.from <= q.to, {
		path: ['to'],
		message: 'to must be ≥ from'
	});

export const pageQuery = z.object({
	limit: intParam('limit', 1, 1000).default(100),
	offset: intParam('offset', 0).default(0)
});

// ── Runs table: filters and sort (added to runListQuery through runSearchQuery) ──
export const runSortKeys = ['started', 'name', 'rig', 'duration', 'frames', 'gospa'] as const;
export type RunSortKey = (typeof runSortKeys)[number];

/** runListQuery plus the Runs table's filters; every old query string still parses the same. */
export const runSearchQuery = runListQuery
	.extend({
		tag: textParam('tag', 64).min(1, 'tag must not be empty').optional(),
		q: textParam('q', 200).optional(),
		since: dayParam('since').optional(),
		until: dayParam('until').optional(),
		sort: z
			.enum(runSortKeys, { error: `sort must be one of ${runSortKeys.join(', ')}` })
			.default('started'),
		dir: z.enum(['asc', 'desc'], { error: 'dir must be asc or desc' }).default('desc')
	})
	.refine((q) => !q.since || !q.until || q.since <= q.until, {
		path: ['until'],
		message: 'until must be on or after since'
	});
export type RunSearch = z.infer<typeof runSearchQuery>;

// ── Strips: downsampled metric series ──
export const seriesQuery = z
	.object({
		/** seconds from the run's first frame */
		from: secondsParam('from').optional(),
		to: secondsParam('to').optional(),
		buckets: intParam('buckets', 1, 4000).default(600)
	})
	.refine((q) => q.from === undefined || q.to === undefined || q.from < q.to, {
		path: ['to'],
		message: 'to must be above from'
	});

// ── Pins ──
export const pinCategories = [
	'missed object',
	'false object',
	'late confirmation',
	'label switch',
	'poor localisation',
	'feed problem',
	'other'
] as const;
export const pinSeverities = ['low', 'medium', 'high', 'critical'] as const;
export type PinCategory = (typeof pinCategories)[number];
export type PinSeverity = (typeof pinSeverities)[number];

/** The view a pin was seen in; also what `?view=` carries in a link. */
export const pinViewSchema = z.object({
	coords: z.enum(COORDS).default('world'),
	zoom: z.number().positive().max(1e6),
	cx: z.number().refine(Number.isFinite),
	cy: z.number().refine(Number.isFinite),
	layers: z.array(z.enum(['measurements', 'estimates', 'truth', 'assignment'])).max(4),
	sigma: z.number().min(1).max(3).default(2),
	selected: z.string().max(128).nullable().default(null)
});
export type PinView = z.infer<typeof pinViewSchema>;

export const newPinSchema = z.object({
	title: z
		.string({ error: 'give the pin a title' })
		.trim()
		.min(1, 'give the pin a title')
		.max(140, 'at most 140 characters'),
	note: z.string().trim().max(4000, 'at most 4000 characters').default(''),
	category: z.enum(pinCategories, {
		error: `category must be one of: ${pinCategories.join(', ')}`
	}),
	severity: z.enum(pinSeverities, {
		error: `severity must be one of: ${pinSeverities.join(', ')}`
	}),
	/** seconds from the run's first frame */
	t: z.coerce
		.number({ error: 't must be a number' })
		.refine(Number.isFinite, 't must be a number')
		.min(0, 't must be ≥ 0'),
	view: pinViewSchema
});
export type NewPin = z.infer<typeof newPinSchema>;

export const pinListQuery = z.object({
	limit: intParam('limit', 1, 500).default(100),
	offset: intParam('offset', 0).default(0)
});
