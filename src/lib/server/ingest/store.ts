/**
 * The PostgreSQL side of ingest: what server-ws/ingest needs from storage (the IngestStore contract in
 * contract.ts), made of the per-run cache (run-cache.ts), row preparation (prepare.ts) and the commit (commit.ts).
 * One transaction per batch: frames (with their per-frame metrics), quarantined messages and the
 * run's counters commit together, so an ack never runs ahead of what is durable.
 */
import type postgres from 'postgres';
import type { Run } from '$lib/api-types';
import type { IngestRunState, RunSpec } from '$lib/protocol/types';
import type {
	CommitOutcome,
	FrameToStore,
	IngestStore,
	KeyResolution,
	OpenRunRequest,
	OpenRunResult,
	QuarantinedToStore
} from './contract';
import { resolveFeedKey } from '$server/rigs';
import { sqlClient } from '$server/db';
import { openStreamedRun, setStreamedRunState } from '$server/runs/streamed';
import { commitBatch } from './commit';
import { RowPreparer } from './prepare';
import { refusalReason, refusedForContent } from './refused';
import { RunCache } from './run-cache';

function specOf(run: Run): RunSpec {
	return {
		name: run.name,
		state_fields: run.state_fields,
		measurement_fields: run.measurement_fields,
		coords: run.coords,
		units: { length: 'm' },
		tags: run.tags,
		notes: run.notes
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
		let opened: Awaited<ReturnType<typeof openStreamedRun>>;
		try {
			opened = await openStreamedRun(req.rig.rigId, req.clientRunId, req.spec);
		} catch (err) {
			// the open's content (validation should have caught it), not the database: answered as invalid_open
			if (!refusedForContent(err)) throw err;
			return { ok: false, reason: `the database refused this open: ${refusalReason(err)}` };
		}
		const { run, resumed, settingsText } = opened;
		if (run.status === 'imported')
			return { ok: false, reason: 'this run was imported and cannot be streamed to' };
		this.#runs.opened(run, settingsText, req.rig.keyId, run.next_seq);
		return {
			ok: true,
			runId: run.id,
			resumed,
			spec: specOf(run),
			nextSeq: run.next_seq,
			lastT: run.last_t,
			frames: run.frame_count,
			state: run.status
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
	): Promise<CommitOutcome> {
		if (frames.length === 0 && quarantined.length === 0) return { refused: [] };
		const ctx = await this.#runs.get(runId);
		const rows = await Promise.all(frames.map((f) => this.#rows.row(runId, f, ctx)));
		return commitBatch(this.#sql, {
			runId,
			ctx,
			frames,
			rows,
			quarantined,
			recompute: (f) => this.#rows.again(runId, f, ctx)
		});
	}

	async setRunState(runId: string, state: IngestRunState): Promise<void> {
		await setStreamedRunState(runId, state);
		if (state === 'ended') this.#runs.forget(runId);
	}

	async touchKey(keyId: string, address: string | null): Promise<void> {
		await this
			.#sql`update feed_keys set last_used_at = now(), last_used_ip = coalesce(${address ?? null}, last_used_ip) where id = ${keyId}`;
	}
}
