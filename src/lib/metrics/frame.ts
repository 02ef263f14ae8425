/** Per-frame metrics as computed at ingest, and the detail behind them for the run screen. */
import type { EgoPose } from '../protocol/types';
import { cardinalityStats, existence, type CardinalityStats } from './cardinality';
import { nees as neesOf, subBlock } from './consistency';
import { closePairs, gospaFromClosePairs, type ClosePairs, type GospaResult } from './gospa';
import type { MetricSettings } from './settings';
import type { Coords } from '../runs';
import { changeCoords, zoneOccupancy, type PlanarObject } from './zones';

export interface FrameContext {
	/** the run's state_fields; must include "x" and "y" */
	stateFields: readonly string[];
	settings: MetricSettings;
	/** coordinates the run reports objects in; default 'world' */
	coords?: Coords;
}

/** What the metrics read of a frame; a decoded `Frame` is one, and so is what the ingest fast path reads. */
export interface MetricFrame {
	seq?: number;
	t?: number;
	ego?: EgoPose;
	/** only the count is read */
	measurements?: { readonly length: number };
	estimates?: readonly MetricEstimate[];
	truth?: readonly MetricTruth[];
}

export interface MetricEstimate {
	x: readonly number[];
	P?: readonly number[];
	r?: number;
}

export interface MetricTruth {
	x: readonly number[];
}

export interface FrameMetrics {
	n_truth: number | null;
	n_estimates: number | null;
	n_measurements: number | null;
	expected_cardinality: number | null;
	gospa: number | null;
	/** Σ d^p over assigned pairs (p-th power of the length unit) */
	gospa_localization: number | null;
	gospa_missed: number | null;
	gospa_false: number | null;
	ospa: number | null;
	nees_mean: number | null;
	/** how many estimates nees_mean averages, so stored rows can be re-averaged */
	nees_count: number;
	/** occupancy per zone name; a zone is absent when it cannot be computed (no estimates, or no ego pose to change coordinates) */
	zones: Record<string, number>;
}

export interface FrameEvaluation {
	metrics: FrameMetrics;
	gospa: GospaResult | null;
	cardinality: CardinalityStats | null;
	/** NEES per estimate (index as in frame.estimates), null where not computed */
	nees: (number | null)[];
}

export interface StateLayout {
	dim: number;
	ix: number;
	iy: number;
}

export function stateLayout(stateFields: readonly string[]): StateLayout {
	const ix = stateFields.indexOf('x');
	const iy = stateFields.indexOf('y');
	if (ix < 0 || iy < 0) throw new RangeError('state_fields must include "x" and "y"');
	return { dim: stateFields.length, ix, iy };
}

/** NEES dimension the settings imply. */
export function neesDimension(ctx: FrameContext): number {
	return ctx.settings.nees === 'state' ? ctx.stateFields.length : 2;
}

export function frameMetrics(frame: MetricFrame, ctx: FrameContext): FrameMetrics {
	return evaluateFrame(frame, ctx, stateLayout(ctx.stateFields), false).metrics;
}

/** `distribution`: whether to compute the cardinality distribution (the run screen draws it; rows do not store it). */
export function evaluateFrame(
	frame: MetricFrame,
	ctx: FrameContext,
	layout = stateLayout(ctx.stateFields),
	distribution = true
): FrameEvaluation {
	const { settings } = ctx;
	const { truth, estimates } = frame;
	const cardinality = !estimates
		? null
		: distribution
			? cardinalityStats(estimates)
			: cardinalityMoments(estimates);
	const g = truth && estimates ? frameGospa(truth, estimates, settings, layout) : null;

	const nees: (number | null)[] = estimates ? estimates.map(() => null) : [];
	let neesSum = 0;
	let neesCount = 0;
	if (g && truth && estimates) {
		for (const [i, j] of g.pairs) {
			const v = pairNees(truth[i], estimates[j], settings.nees ?? 'position', layout);
			nees[j] = v;
			if (v !== null) {
				neesSum += v;
				neesCount++;
			}
		}
	}

	const zones: Record<string, number> = {};
	if (estimates) {
		const planar = estimates.map((e) => planarOf(e, layout));
		for (const zone of settings.zones) {
			const moved: PlanarObject[] = [];
			let ok = true;
			for (const o of planar) {
				const m = changeCoords(o, ctx.coords ?? 'world', zone.coords, frame.ego);
				if (!m) {
					ok = false;
					break;
				}
				moved.push(m);
			}
			if (ok) zones[zone.name] = zoneOccupancy(moved, zone);
		}
	}

	return {
		metrics: {
			n_truth: truth ? truth.length : null,
			n_estimates: estimates ? estimates.length : null,
			n_measurements: frame.measurements ? frame.measurements.length : null,
			expected_cardinality: cardinality ? cardinality.mean : null,
			gospa: g ? g.gospa : null,
			gospa_localization: g ? g.localization : null,
			gospa_missed: g ? g.missed : null,
			gospa_false: g ? g.falseCount : null,
			ospa: g ? g.ospa.ospa : null,
			nees_mean: neesCount > 0 ? neesSum / neesCount : null,
			nees_count: neesCount,
			zones
		},
		gospa: g,
		cardinality,
		nees
	};
}

/** Mean and variance alone, summed in the same order as cardinalityStats; the distribution is left empty. */
function cardinalityMoments(estimates: readonly { r?: number }[]): CardinalityStats {
	let mean = 0;
	let variance = 0;
	for (const e of estimates) {
		const r = existence(e.r);
		mean += r;
		variance += r * (1 - r);
	}
	return { mean, variance, distribution: new Float64Array(0) };
}

/** GOSPA on positions or on the weighted full state; null when truth lacks the fields needed. */
function frameGospa(
	truth: readonly MetricTruth[],
	estimates: readonly MetricEstimate[],
	settings: MetricSettings,
	layout: StateLayout
): GospaResult | null {
	const m = truth.length;
	const n = estimates.length;
	let pairs: ClosePairs | null;
	if (settings.distance === 'state') {
		const { dim } = layout;
		if (truth.some((t) => t.x.length !== dim) || estimates.some((e) => e.x.length !== dim))
			return null;
		const tx = new Float64Array(m * dim);
		const ex = new Float64Array(n * dim);
		truth.forEach((t, i) => tx.set(t.x, i * dim));
		estimates.forEach((e, j) => ex.set(e.x, j * dim));
		pairs = closePairs(tx, m, ex, n, settings.c, { weights: settings.weights });
	} else {
		const { ix, iy } = layout;
		const tx = new Float64Array(m * 2);
		const ex = new Float64Array(n * 2);
		for (let i = 0; i < m; i++) {
			const x = truth[i].x;
			if (x[ix] === undefined || x[iy] === undefined) return null;
			tx[2 * i] = x[ix];
			tx[2 * i + 1] = x[iy];
		}
		for (let j = 0; j < n; j++) {
			const x = estimates[j].x;
			ex[2 * j] = x[ix] ?? NaN;
			ex[2 * j + 1] = x[iy] ?? NaN;
		}
		pairs = closePairs(tx, m, ex, n, settings.c);
	}
	return pairs && gospaFromClosePairs(pairs, m, n, settings.c, settings.p);
}

function pairNees(
	t: MetricTruth,
	e: MetricEstimate,
	mode: 'position' | 'state',
	layout: StateLayout
): number | null {
	const { dim, ix, iy } = layout;
	if (!e.P || e.P.length !== dim * dim) return null;
	if (mode === 'state') {
		if (t.x.length !== dim || e.x.length !== dim) return null;
		return neesOf(
			e.x.map((v, k) => v - t.x[k]),
			e.P
		);
	}
	return neesOf([e.x[ix] - t.x[ix], e.x[iy] - t.x[iy]], subBlock(e.P, dim, [ix, iy]));
}

function planarOf(e: MetricEstimate, layout: StateLayout): PlanarObject {
	const { dim, ix, iy } = layout;
	const o: PlanarObject = { mean: [e.x[ix], e.x[iy]], r: e.r };
	if (e.P && e.P.length === dim * dim)
		o.cov = [e.P[ix * dim + ix], e.P[ix * dim + iy], e.P[iy * dim + iy]];
	return o;
}
