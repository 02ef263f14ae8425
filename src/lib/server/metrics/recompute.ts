/**
 * Rewrites a run's stored metric columns with its current settings, in chunks, recording progress
 * in metric_recomputes. A job carries the settings version it was queued for and stops as soon as
 * a newer save has superseded it (the newer job redoes the run).
 */
import { frameMetrics } from '$lib/metrics';
import { sqlClient } from '$server/db';
import { decodeStoredFrame, frameContext, metricRun } from './run';

export type RecomputeOutcome = 'done' | 'superseded' | 'gone';

export async function recomputeRun(
	runId: string,
	version: number,
	batch = 500
): Promise<RecomputeOutcome> {
	const sql = sqlClient();
	const [claim] = await sql`
		update metric_recomputes set state = 'running', progress = 0, error = null, updated_at = now()
		where run_id = ${runId} and version = ${version}
		returning 1`;
	if (!claim) return 'superseded';
	const run = await metricRun(runId);
	if (!run) return 'gone';
	const ctx = frameContext(run);
	const total = Math.max(1, run.frameCount);
	let after = -1;
	let done = 0;
	for (;;) {
		const rows = await sql<{ seq: number; data: Buffer }[]>`
			select seq::float8 as seq, data from frames where run_id = ${runId} and seq > ${after} order by seq limit ${batch}`;
		// Done: a live run's ingest stores every frame committed after the save with the saved settings (it reads
		// them under the run's row lock in each commit), and this job, queued after the save, read every frame
		// committed before it.
		if (rows.length === 0) break;
		const values = rows.map((r) => {
			const m = frameMetrics(decodeStoredFrame(r.data), ctx);
			return { ...m, seq: r.seq, zones: Object.keys(m.zones).length ? m.zones : null };
		});
		await sql`
			update frames f set n_measurements = v.n_measurements, n_estimates = v.n_estimates, n_truth = v.n_truth,
				expected_cardinality = v.expected_cardinality, gospa = v.gospa, gospa_localization = v.gospa_localization,
				gospa_missed = v.gospa_missed, gospa_false = v.gospa_false, ospa = v.ospa, nees_mean = v.nees_mean,
				nees_count = v.nees_count, zones = v.zones
			from jsonb_to_recordset(${JSON.stringify(values)}::text::jsonb) as v(
				seq bigint, n_measurements integer, n_estimates integer, n_truth integer, expected_cardinality float8,
				gospa float8, gospa_localization float8, gospa_missed integer, gospa_false integer, ospa float8,
				nees_mean float8, nees_count integer, zones jsonb)
			where f.run_id = ${runId} and f.seq = v.seq`;
		after = rows[rows.length - 1].seq;
		done += rows.length;
		const still = await sql`
			update metric_recomputes set progress = ${Math.min(99.9, (100 * done) / total)}, updated_at = now()
			where run_id = ${runId} and version = ${version} returning 1`;
		if (still.length === 0) return 'superseded';
	}
	await sql`update metric_recomputes set state = 'done', progress = 100, updated_at = now()
		where run_id = ${runId} and version = ${version}`;
	return 'done';
}
