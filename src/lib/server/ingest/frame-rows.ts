/**
 * The stored row of one frame: the bytes as sent, set sizes and the per-frame metric columns. Pure: no
 * database, so the row worker (row-worker.ts) and the store compute rows with the same code.
 */
import { frameMetrics, type FrameMetrics, type MetricFrame } from '$lib/metrics/frame';
import type { MetricSettings } from '$lib/metrics/settings';
import type { Coords } from '$lib/runs';

export interface RowContext {
	stateFields: string[];
	settings: MetricSettings;
	coords: Coords;
	/**
	 * false: set sizes only, the metric columns stay null. A measurement switch (INGEST_METRIC_COLUMNS=off, used by
	 * bench:ingest to show what the metric columns cost), not a product setting.
	 */
	metrics?: boolean;
}

/** The columns of a frames row: the per-frame metrics, and what identifies and holds the frame. */
export type FrameRow = Omit<FrameMetrics, 'zones'> & {
	run_id: string;
	seq: number;
	t: number;
	ts: Date;
	data: Buffer;
	cardinality_sd: number | null;
	/** null when no zone could be computed */
	zones: Record<string, number> | null;
};

/** √Σ r(1 − r): the spread of the number of objects under the multi-Bernoulli estimate (r absent counts as 1). */
export function cardinalitySd(frame: MetricFrame): number | null {
	if (!frame.estimates) return null;
	let v = 0;
	for (const e of frame.estimates) if (e.r !== undefined) v += e.r * (1 - e.r);
	return Math.sqrt(v);
}

export function frameMetricsFor(frame: MetricFrame, ctx: RowContext): FrameMetrics {
	if (ctx.metrics === false) return setSizes(frame);
	return frameMetrics(frame, {
		stateFields: ctx.stateFields,
		settings: ctx.settings,
		coords: ctx.coords
	});
}

function setSizes(frame: MetricFrame): FrameMetrics {
	return {
		n_truth: frame.truth ? frame.truth.length : null,
		n_estimates: frame.estimates ? frame.estimates.length : null,
		n_measurements: frame.measurements ? frame.measurements.length : null,
		expected_cardinality: null,
		gospa: null,
		gospa_localization: null,
		gospa_missed: null,
		gospa_false: null,
		ospa: null,
		nees_mean: null,
		nees_count: 0,
		zones: {}
	};
}

/** The row of a frame whose metrics are known. */
export function rowOf(
	runId: string,
	f: { seq: number; t: number; raw: Uint8Array },
	m: FrameMetrics,
	sd: number | null
): FrameRow {
	return {
		run_id: runId,
		seq: f.seq,
		t: f.t,
		ts: new Date(f.t * 1000),
		data: Buffer.from(f.raw.buffer, f.raw.byteOffset, f.raw.byteLength),
		n_measurements: m.n_measurements,
		n_estimates: m.n_estimates,
		n_truth: m.n_truth,
		expected_cardinality: m.expected_cardinality,
		cardinality_sd: sd,
		gospa: m.gospa,
		gospa_localization: m.gospa_localization,
		gospa_missed: m.gospa_missed,
		gospa_false: m.gospa_false,
		ospa: m.ospa,
		nees_mean: m.nees_mean,
		nees_count: m.nees_count,
		zones: Object.keys(m.zones).length ? m.zones : null
	};
}

/** The stored row of one frame, its metrics computed here. */
export function frameRow(
	runId: string,
	f: { seq: number; t: number; raw: Uint8Array; frame: MetricFrame },
	ctx: RowContext
): FrameRow {
	return rowOf(runId, f, frameMetricsFor(f.frame, ctx), cardinalitySd(f.frame));
}
