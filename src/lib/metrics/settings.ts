import { z } from 'zod';
import { textProblem } from '../protocol/validate';
import { COORDS } from '../runs';
import { DEFAULT_MOT_THRESHOLD } from './tracks';
import type { Zone } from './zones';

export type DistanceMode = 'position' | 'state';

export interface MetricSettings {
	/** GOSPA/OSPA cut-off, run length unit */
	c: number;
	/** GOSPA/OSPA order, 1 ≤ p < ∞ */
	p: number;
	/** 'position': Euclidean on the x, y fields; 'state': weighted Euclidean on every state field */
	distance: DistanceMode;
	/** one weight ≥ 0 per state field, used with distance 'state'; default all 1 */
	weights?: number[];
	zones: Zone[];
	/** CLEAR MOT match gate, run length unit; default 2 */
	motThreshold?: number;
	/** NEES on the x, y block (dimension 2, default) or on the full state when truth carries it */
	nees?: 'position' | 'state';
}

export const egoLaneZone: Zone = {
	name: 'ego lane 0–20 m',
	coords: 'ego',
	x: [0, 20],
	y: [-1.75, 1.75]
};

/**
 * c = 10 m: well above the localisation error of a working tracker for road users (a few metres),
 * so those errors are measured rather than clipped, yet an estimate more than about two car lengths
 * from every true object is plainly a false one. p = 2: large errors weigh more, and the
 * localisation part reads as a sum of squared errors, as in RMSE.
 */
export const defaultMetricSettings: MetricSettings = {
	c: 10,
	p: 2,
	distance: 'position',
	zones: [egoLaneZone],
	motThreshold: DEFAULT_MOT_THRESHOLD,
	nees: 'position'
};

const interval = z
	.tuple([z.number(), z.number()])
	.refine(([lo, hi]) => lo < hi, { message: 'min must be below max' });

export const zoneSchema = z.object({
	// zone names are keys of the frames' zones (jsonb): text jsonb stores, as everything ingest stores
	name: z
		.string()
		.trim()
		.min(1)
		.max(64)
		.superRefine((name, ctx) => {
			const problem = textProblem(name);
			if (problem !== null) ctx.addIssue({ code: 'custom', message: problem });
		}),
	coords: z.enum(COORDS),
	x: interval,
	y: interval,
	angle: z.number().optional()
});

export const metricSettingsSchema = z
	.object({
		c: z.number().positive(),
		p: z.number().min(1),
		distance: z.enum(['position', 'state']),
		weights: z.array(z.number().min(0)).optional(),
		zones: z.array(zoneSchema).max(32),
		motThreshold: z.number().positive().optional(),
		nees: z.enum(['position', 'state']).optional()
	})
	.refine((s) => new Set(s.zones.map((zone) => zone.name)).size === s.zones.length, {
		message: 'zone names must be unique',
		path: ['zones']
	});

export type MetricSettingsResult =
	{ ok: true; settings: MetricSettings } | { ok: false; errors: string[] };

/**
 * Validates untrusted input. With `stateFields` it also checks that weights, if any, give one per
 * field, and that the fields hold x and y.
 */
export function parseMetricSettings(
	input: unknown,
	stateFields?: readonly string[]
): MetricSettingsResult {
	const parsed = metricSettingsSchema.safeParse(input);
	if (!parsed.success) {
		return {
			ok: false,
			errors: parsed.error.issues.map((i) => `${i.path.join('.') || '(settings)'}: ${i.message}`)
		};
	}
	const settings: MetricSettings = parsed.data;
	const errors: string[] = [];
	if (stateFields) {
		if (!stateFields.includes('x') || !stateFields.includes('y'))
			errors.push('state_fields: must include "x" and "y"');
		if (settings.weights && settings.weights.length !== stateFields.length) {
			errors.push(
				`weights: need ${stateFields.length} (one per state field), got ${settings.weights.length}`
			);
		}
	}
	return errors.length ? { ok: false, errors } : { ok: true, settings };
}
