/**
 * The PostgreSQL side of ingest: what server-ws/ingest needs from storage (its IngestStore contract).
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
} from '../../../../server-ws/ingest/store';
import { resolveFeedKey } from '$server/rigs';
import { sqlClient } from '$server/db';
import { copyHeader, copyTrailer, frameCopyColumns, frameTuple, uuidBytes } from './copy-binary';
import { cardinalitySd, frameMetricsFor, rowOf } from './frame-rows';
import { ensurePartitionsFor } from './partitions';
import { RowPool, type PreparedRow } from './row-pool';

interface RunContext {
	stateFields: string[];
	measurementFields: string[];
	coords: 'world' | 'ego';
	settings: MetricSettings;
	keyId: string | null;
	/** when settings were last read: they are re-read after SETTINGS_TTL_MS, so a settings save reaches live runs */
	settingsReadAt: number;
	/** 1 + the highest seq known stored or quarantined for the run; null when unknown */
	committedNext: number | null;
}

/** How stale a live run's metric settings may get; the recompute job waits this long before it finishes. */
export const SETTINGS_TTL_MS = 1000;

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
	#runs = new Map<string, RunContext>();
	#prepared = new WeakMap<FrameToStore, Promise<PreparedRow>>();
	#pool: RowPool | null;
	#metricColumns = process.env.INGEST_METRIC_COLUMNS !== 'off';

	/** `rowWorker`: compute rows in a worker thread (INGEST_ROW_WORKER=off computes them inline). */
	constructor(
		sql: postgres.Sql = sqlClient(),
		rowWorker: boolean = process.env.INGEST_ROW_WORKER !== 'off'
	) {
		this.#sql = sql;
		this.#pool = rowWorker ? new RowPool() : null;
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
		this.#runs.set(row.id, {
			stateFields: row.state_fields,
			measurementFields: row.measurement_fields,
			coords: row.coords,
			settings: row.metric_settings ?? defaultMetricSettings,
			keyId: req.rig.keyId,
			settingsReadAt: Date.now(),
			committedNext: Number(row.next_seq)
		});
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

	async #context(runId: string): Promise<RunContext> {
		let ctx = this.#runs.get(runId);
		if (!ctx) {
			const [row] = await this.#sql<RunRow[]>`select * from runs where id = ${runId}`;
			ctx = {
				stateFields: row.state_fields,
				measurementFields: row.measurement_fields,
				coords: row.coords,
				settings: row.metric_settings ?? defaultMetricSettings,
				keyId: null,
				settingsReadAt: Date.now(),
				committedNext: null
			};
			this.#runs.set(runId, ctx);
		} else if (Date.now() - ctx.settingsReadAt > SETTINGS_TTL_MS) {
			const [row] = await this.#sql<
				Pick<RunRow, 'metric_settings'>[]
			>`select metric_settings from runs where id = ${runId}`;
			ctx.settings = row?.metric_settings ?? defaultMetricSettings;
			ctx.settingsReadAt = Date.now();
		}
		return ctx;
	}

	/** Per-frame rows are computed as frames arrive, overlapping the previous batch's commit. */
	prepareFrame(runId: string, frame: FrameToStore): void {
		const ctx = this.#runs.get(runId);
		if (ctx && !this.#prepared.has(frame))
			this.#prepared.set(frame, this.#prepare(runId, frame, ctx));
	}

	#prepare(runId: string, f: FrameToStore, ctx: RunContext): Promise<PreparedRow> {
		const rowCtx = {
			stateFields: ctx.stateFields,
			settings: ctx.settings,
			coords: ctx.coords,
			metrics: this.#metricColumns
		};
		if (this.#pool === null || !this.#pool.usable) {
			const metrics = frameMetricsFor(f.frame, rowCtx);
			const sd = cardinalitySd(f.frame);
			f.metrics = metrics;
			const tuple = frameTuple(uuidBytes(runId), rowOf(runId, f, metrics, sd));
			return Promise.resolve({ tuple, metrics, cardinalitySd: sd });
		}
		const dims = { stateDim: ctx.stateFields.length, measDim: ctx.measurementFields.length };
		const prepared = this.#pool.prepare(runId, rowCtx, dims, f).then((p) => {
			f.metrics = p.metrics;
			return p;
		});
		// a batch dropped after a failed commit is never awaited: its failure must not go unhandled
		prepared.catch(() => {});
		return prepared;
	}

	async commitFrames(
		runId: string,
		frames: FrameToStore[],
		quarantined: QuarantinedToStore[]
	): Promise<void> {
		if (frames.length === 0 && quarantined.length === 0) return;
		const ctx = await this.#context(runId);
		const prepared = await Promise.all(
			frames.map((f) => this.#prepared.get(f) ?? this.#prepare(runId, f, ctx))
		);
		await ensurePartitionsFor(
			this.#sql,
			frames.map((f) => f.t)
		);
		let maxSeq = -1;
		for (const f of frames) maxSeq = Math.max(maxSeq, f.seq);
		for (const q of quarantined) maxSeq = Math.max(maxSeq, q.seq);
		const lastT = frames.length ? frames[frames.length - 1].t : null;
		const firstT = frames.length ? frames[0].t : null;

		const commit = (viaCopy: boolean) =>
			this.#sql.begin(async (tx) => {
				let stored = 0;
				if (frames.length && viaCopy) {
					await copyFrames(
						tx,
						prepared.map((p) => p.tuple)
					);
					stored = frames.length;
				} else if (frames.length) {
					const values = frames.map((f, i) => {
						const r = rowOf(runId, f, prepared[i].metrics, prepared[i].cardinalitySd);
						return { ...r, zones: r.zones === null ? null : tx.json(r.zones) };
					});
					const res = await tx`insert into frames ${tx(values)} on conflict do nothing`;
					stored = res.count;
				}
				if (quarantined.length) {
					await tx`insert into quarantine ${tx(
						quarantined.map((q) => ({
							run_id: runId,
							seq: q.seq,
							reason: q.reason,
							raw: Buffer.from(q.raw.buffer, q.raw.byteOffset, q.raw.byteLength)
						}))
					)}`;
				}
				// the run's counters and the key's frame count in one round trip
				await tx`
					with run as (
						update runs set
							next_seq = greatest(next_seq, ${maxSeq + 1}),
							frame_count = frame_count + ${stored},
							quarantine_count = quarantine_count + ${quarantined.length},
							first_t = coalesce(first_t, ${firstT}),
							last_t = coalesce(${lastT}, last_t),
							last_seen_at = now()
						where id = ${runId}
						returning id
					)
					update feed_keys set frames_received = frames_received + ${stored}
					where id = ${ctx.keyId ?? null}::uuid and ${stored} > 0 and exists (select 1 from run)`;
			});
		// COPY cannot skip rows that exist, and postgres.js leaves a failed COPY unsettled; so COPY only when
		// none of these seqs can be stored yet: above what this store committed for the run (the normal case),
		// or, when it does not know, when the database says so; insert-or-skip otherwise.
		const seqs = frames.map((f) => f.seq);
		let fresh =
			seqs.length === 0 || (ctx.committedNext !== null && Math.min(...seqs) >= ctx.committedNext);
		if (!fresh) {
			const [dup] = await this.#sql<{ n: number }[]>`
				select count(*)::int as n from frames where run_id = ${runId} and seq = any(${seqs}::bigint[])`;
			fresh = dup.n === 0;
		}
		try {
			await commit(fresh);
			ctx.committedNext = Math.max(ctx.committedNext ?? 0, maxSeq + 1);
		} catch (err) {
			ctx.committedNext = null; // the outcome is unknown: ask the database next time
			throw err;
		}
	}

	async setRunState(runId: string, state: IngestRunState): Promise<void> {
		if (state === 'live') {
			await this
				.#sql`update runs set status = 'live', ended_at = null, last_seen_at = now() where id = ${runId}`;
		} else {
			await this
				.#sql`update runs set status = ${state}, ended_at = coalesce(ended_at, now()) where id = ${runId} and status <> 'imported'`;
			if (state === 'ended') this.#runs.delete(runId);
		}
	}

	async touchKey(keyId: string, address: string | null): Promise<void> {
		await this
			.#sql`update feed_keys set last_used_at = now(), last_used_ip = coalesce(${address ?? null}, last_used_ip) where id = ${keyId}`;
	}
}

const copyDeadlineMs = 10_000;

async function copyFrames(tx: postgres.TransactionSql, tuples: Uint8Array[]): Promise<void> {
	const stream = await tx
		.unsafe(`copy frames (${frameCopyColumns}) from stdin (format binary)`)
		.writable();
	// A COPY the server rejects never settles in postgres.js: give up after a while, so the transaction rolls
	// back and the rig's connection closes (1011) and resumes, instead of the run hanging.
	let timer: ReturnType<typeof setTimeout> | undefined;
	try {
		await new Promise<void>((resolve, reject) => {
			timer = setTimeout(
				() => reject(new Error('COPY into frames did not complete')),
				copyDeadlineMs
			);
			stream.on('error', reject);
			stream.end(Buffer.concat([copyHeader(), ...tuples, copyTrailer()]), () => resolve());
		});
	} finally {
		clearTimeout(timer);
	}
}

export { frameRow, type FrameRow } from './frame-rows';
