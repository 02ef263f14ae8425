/**
 * The PostgreSQL side of ingest: what server-ws/ingest needs from storage (the IngestStore contract in
 * contract.ts), made of the per-run cache (run-cache.ts), row preparation (prepare.ts) and the commit (commit.ts).
 * One transaction per batch: frames (with their per-frame metrics), quarantined messages and the
 * run's counters commit together, so an ack never runs ahead of what is durable.
 */
import type postgres from 'postgres';
import { defaultMetricSettings, type MetricSettings } from '$lib/metrics';
import type { IngestRunState, RunSpec } from '$lib/protocol/types';
import type {
	FrameToStore,
	IngestStore,
	KeyResolution,
	OpenRunRequest,
	OpenRunResult,
	QuarantinedToStore
} from './contract';
import { resolveFeedKey } from '$server/rigs';
import { sqlClient } from '$server/db';
import { commitBatch } from './commit';
import { RowPreparer } from './prepare';
import { RunCache } from './run-cache';

interface RunRow {
	id: string;
	name: string;
	state_fields: string[];
	measurement_fields: string[];
	coords: 'world' | 'ego';
	length_unit: string;
	tags: string[];
	notes: string;
	status: IngestRunState | 'imported';
	next_seq: string | number;
	frame_count: string | number;
	last_t: number | null;
	metric_settings: MetricSettings | null;
}

function specOf(row: RunRow): RunSpec {
	return {
		name: row.name,
		state_fields: row.state_fields,
		measurement_fields: row.measurement_fields,
		coords: row.coords,
		units: { length: 'm' },
		tags: row.tags,
		notes: row.notes
	};
}

export class PostgresIngestStore implements IngestStore {
	#sql: postgres.Sql;
	#runs: RunCache;
	#rows: RowPreparer;

	/** `rowWorker`: compute rows in a worker thread (INGEST_ROW_WORKER=off computes them inline). */
	constructor(
		sql: postgres.Sql = sqlClient(),
		rowWorker: boolean = process.env.INGEST_ROW_WORKER !== 'off'
	) {
		this.#sql = sql;
		this.#runs = new RunCache(sql);
		this.#rows = new RowPreparer(rowWorker);
	}

	async resolveKey(key: string): Promise<KeyResolution> {
		const r = await resolveFeedKey(key);
		return r.ok ? { ok: true, rig: { rigId: r.rigId, keyId: r.keyId, expiresAt: r.expiresAt } } : r;
	}

	async openRun(req: OpenRunRequest): Promise<OpenRunResult> {
		const { spec } = req;
		let row: RunRow | undefined;
		let resumed = false;
		if (req.clientRunId !== null) {
			[row] = await this.#sql<
				RunRow[]
			>`select * from runs where rig_id = ${req.rig.rigId} and client_run_id = ${req.clientRunId}`;
			resumed = row !== undefined;
		}
		if (!row) {
			const inserted = await this.#sql<RunRow[]>`
				insert into runs (rig_id, client_run_id, name, state_fields, measurement_fields, coords, length_unit, tags, notes, status, metric_settings)
				values (${req.rig.rigId}, ${req.clientRunId}, ${spec.name}, ${spec.state_fields}, ${spec.measurement_fields},
				        ${spec.coords ?? 'world'}, ${spec.units?.length ?? 'm'}, ${spec.tags ?? []}, ${spec.notes ?? ''}, 'live',
				        ${JSON.stringify(defaultMetricSettings)}::text::jsonb)
				on conflict (rig_id, client_run_id) do nothing
				returning *`;
			row = inserted[0];
			if (!row) {
				// opened concurrently by another connection of the same rig
				[row] = await this.#sql<
					RunRow[]
				>`select * from runs where rig_id = ${req.rig.rigId} and client_run_id = ${req.clientRunId}`;
				resumed = true;
			}
		}
		if (row.status === 'imported')
			return { ok: false, reason: 'this run was imported and cannot be streamed to' };
		this.#runs.opened(row, req.rig.keyId, Number(row.next_seq));
		return {
			ok: true,
			runId: row.id,
			resumed,
			spec: specOf(row),
			nextSeq: Number(row.next_seq),
			lastT: row.last_t,
			frames: Number(row.frame_count),
			state: row.status
		};
	}

	/** Per-frame rows are computed as frames arrive, overlapping the previous batch's commit. */
	prepareFrame(runId: string, frame: FrameToStore): void {
		const ctx = this.#runs.peek(runId);
		if (ctx) this.#rows.start(runId, frame, ctx);
	}

	async commitFrames(
		runId: string,
		frames: FrameToStore[],
		quarantined: QuarantinedToStore[]
	): Promise<void> {
		if (frames.length === 0 && quarantined.length === 0) return;
		const ctx = await this.#runs.get(runId);
		const prepared = await Promise.all(frames.map((f) => this.#rows.row(runId, f, ctx)));
		await commitBatch(this.#sql, runId, ctx, frames, prepared, quarantined);
	}

	async setRunState(runId: string, state: IngestRunState): Promise<void> {
		if (state === 'live') {
			await this
				.#sql`update runs set status = 'live', ended_at = null, last_seen_at = now() where id = ${runId}`;
		} else {
			await this
				.#sql`update runs set status = ${state}, ended_at = coalesce(ended_at, now()) where id = ${runId} and status <> 'imported'`;
			if (state === 'ended') this.#runs.forget(runId);
		}
	}

	async touchKey(keyId: string, address: string | null): Promise<void> {
		await this
			.#sql`update feed_keys set last_used_at = now(), last_used_ip = coalesce(${address ?? null}, last_used_ip) where id = ${keyId}`;
	}
}
