/**
 * Per-frame metric rows of a run: read from the stored metric columns, or computed for one request
 * from the stored frames with other settings. Both come a batch at a time, in seq order.
 */
import { frameMetrics, type FrameMetrics, type MetricSettings } from '$lib/metrics';
import { sqlClient } from '$server/db';
import { frameContext, storedFrames, type MetricRun, type SeqRange } from './run';

export type MetricRow = { seq: number; t: number } & Omit<FrameMetrics, 'nees_count'> & {
		/** null for frames stored before the count was kept */
		nees_count: number | null;
	};

/** Column order of the JSON rows and the CSV; zones follow as `zone:<name>` columns. */
export const metricColumns = [
	'seq',
	't',
	'n_truth',
	'n_estimates',
	'n_measurements',
	'expected_cardinality',
	'gospa',
	'gospa_localization',
	'gospa_missed',
	'gospa_false',
	'ospa',
	'nees_mean',
	'nees_count'
] as const satisfies readonly (keyof MetricRow)[];

type StoredRow = Omit<MetricRow, 'zones'> & { zones: Record<string, number> | null };

/** Rows as stored at ingest (or by the last recompute). */
export async function* storedRows(
	run: MetricRun,
	range: SeqRange,
	batch = 1000
): AsyncGenerator<MetricRow[]> {
	const sql = sqlClient();
	const cursor = sql<StoredRow[]>`
		select seq::float8 as seq, t, n_truth, n_estimates, n_measurements, expected_cardinality, gospa, gospa_localization,
			gospa_missed, gospa_false, ospa, nees_mean, nees_count, zones
		from frames
		where run_id = ${run.id}
		  and (${range.fromSeq ?? null}::bigint is null or seq >= ${range.fromSeq ?? null}::bigint)
		  and (${range.toSeq ?? null}::bigint is null or seq <= ${range.toSeq ?? null}::bigint)
		order by seq
		limit ${range.limit === undefined ? null : range.limit + 1}::bigint`.cursor(batch);
	for await (const rows of cursor) yield rows.map((r) => ({ ...r, zones: r.zones ?? {} }));
}

/** Rows computed now from the stored frames with `settings`; nothing is written. */
export async function* computedRows(
	run: MetricRun,
	settings: MetricSettings,
	range: SeqRange
): AsyncGenerator<MetricRow[]> {
	const ctx = frameContext(run, settings);
	for await (const frames of storedFrames(run, range)) {
		yield frames.map(({ seq, t, frame }) => ({ seq, t, ...frameMetrics(frame, ctx) }));
	}
}

/** Zone names the stored rows of a range carry, beyond those the settings name (say, before a recompute ends). */
export async function storedZoneNames(run: MetricRun, range: SeqRange): Promise<string[]> {
	const sql = sqlClient();
	const rows = await sql<{ name: string }[]>`
		select distinct jsonb_object_keys(zones) as name from frames
		where run_id = ${run.id} and zones is not null
		  and (${range.fromSeq ?? null}::bigint is null or seq >= ${range.fromSeq ?? null}::bigint)
		  and (${range.toSeq ?? null}::bigint is null or seq <= ${range.toSeq ?? null}::bigint)
		order by 1`;
	return rows.map((r) => r.name);
}
