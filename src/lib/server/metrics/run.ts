/** A run as the metric code needs it, and its stored frames decoded back into sets, a batch at a time. */
import {
	defaultMetricSettings,
	parseMetricSettings,
	type FrameContext,
	type MetricSettings
} from '$lib/metrics';
import type { Run } from '$lib/api-types';
import { fromMsgpack } from '$lib/protocol/codec';
import type { Frame, FrameMessage } from '$lib/protocol/types';
import { sqlClient } from '$server/db';
import { getRun } from '$server/runs';

/** The fields of a Run the metric code reads, and its settings checked against its state fields. */
export interface MetricRun {
	id: Run['id'];
	name: Run['name'];
	status: Run['status'];
	stateFields: Run['state_fields'];
	coords: Run['coords'];
	lengthUnit: Run['length_unit'];
	frameCount: Run['frame_count'];
	nextSeq: Run['next_seq'];
	settings: MetricSettings;
}

/** The run's stored settings, or the defaults when none (or none that still validate) are stored. */
export function settingsOf(stored: unknown, stateFields: readonly string[]): MetricSettings {
	if (stored === null || stored === undefined) return defaultMetricSettings;
	const parsed = parseMetricSettings(stored, stateFields);
	return parsed.ok ? parsed.settings : defaultMetricSettings;
}

export async function metricRun(id: string): Promise<MetricRun | null> {
	const row = await getRun(id);
	if (!row) return null;
	return {
		id: row.id,
		name: row.name,
		status: row.status,
		stateFields: row.state_fields,
		coords: row.coords,
		lengthUnit: row.length_unit,
		frameCount: row.frame_count,
		nextSeq: row.next_seq,
		settings: settingsOf(row.metric_settings, row.state_fields)
	};
}

export function frameContext(
	run: MetricRun,
	settings: MetricSettings = run.settings
): FrameContext {
	return { stateFields: run.stateFields, coords: run.coords, settings };
}

/**
 * A stored frame's bytes back to its sets. They passed the ingest validator before they were
 * stored, so they are trusted here rather than validated a second time on every read.
 */
export function decodeStoredFrame(data: Uint8Array): Frame {
	const { type: _type, ...frame } = fromMsgpack(data) as FrameMessage;
	return frame;
}

export interface SeqRange {
	fromSeq?: number;
	toSeq?: number;
	/** rows at most; undefined for all */
	limit?: number;
}

export interface StoredFrame {
	seq: number;
	t: number;
	frame: Frame;
}

/**
 * Frames of a run in seq order, `batch` at a time through a server-side cursor, so memory stays
 * bounded however long the run is. One row more than `limit` is read, to tell whether more follow.
 */
export async function* storedFrames(
	run: MetricRun,
	range: SeqRange,
	batch = 500
): AsyncGenerator<StoredFrame[]> {
	const sql = sqlClient();
	const cursor = sql<{ seq: number; t: number; data: Buffer }[]>`
		select seq::float8 as seq, t, data from frames
		where run_id = ${run.id}
		  and (${range.fromSeq ?? null}::bigint is null or seq >= ${range.fromSeq ?? null}::bigint)
		  and (${range.toSeq ?? null}::bigint is null or seq <= ${range.toSeq ?? null}::bigint)
		order by seq
		limit ${range.limit === undefined ? null : range.limit + 1}::bigint`.cursor(batch);
	for await (const rows of cursor) {
		yield rows.map((r) => ({ seq: r.seq, t: r.t, frame: decodeStoredFrame(r.data) }));
	}
}
