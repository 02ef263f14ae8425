/**
 * The PostgreSQL side of ingest: what server-ws/ingest needs from storage (its IngestStore contract).
 * One transaction per batch: frames (with their per-frame metrics), quarantined messages and the
 * run's counters commit together, so an ack never runs ahead of what is durable.
 */
import type postgres from 'postgres';
import { defaultMetricSettings, type MetricSettings } from '$lib/metrics';
import type { IngestRunState, RunSpec } from '$lib/protocol/types';
import type {
	CommitOutcome,
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
	/** runs.metric_settings as jsonb text ('' for none) when `settings` were read: tells a save apart */
	settingsText: string;
	keyId: string | null;
	/** 1 + the highest seq known stored or quarantined for the run; null when unknown */
	committedNext: number | null;
}

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
	/** metric_settings as jsonb text: equal settings have equal text */
	settings_text: string | null;
}

/** A frame's row being computed, and the settings (as text) it is computed with. */
interface Pending {
	row: Promise<PreparedRow>;
	settingsText: string;
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
	#prepared = new WeakMap<FrameToStore, Pending>();
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
		try {
			return await this.#openRun(req);
		} catch (err) {
			// the open's content (validation should have caught it), not the database: answered as invalid_open
			if (!refusedForContent(err)) throw err;
			const message = err instanceof Error ? err.message : String(err);
			return { ok: false, reason: `the database refused this open: ${message}` };
		}
	}

	async #openRun(req: OpenRunRequest): Promise<OpenRunResult> {
		const { spec } = req;
		let row: RunRow | undefined;
		let resumed = false;
		if (req.clientRunId !== null) {
			[row] = await this.#sql<
				RunRow[]
			>`select *, metric_settings::text as settings_text from runs where rig_id = ${req.rig.rigId} and client_run_id = ${req.clientRunId}`;
			resumed = row !== undefined;
		}
		if (!row) {
			const inserted = await this.#sql<RunRow[]>`
				insert into runs (rig_id, client_run_id, name, state_fields, measurement_fields, coords, length_unit, tags, notes, status, metric_settings)
				values (${req.rig.rigId}, ${req.clientRunId}, ${spec.name}, ${spec.state_fields}, ${spec.measurement_fields},
				        ${spec.coords ?? 'world'}, ${spec.units?.length ?? 'm'}, ${spec.tags ?? []}, ${spec.notes ?? ''}, 'live',
				        ${JSON.stringify(defaultMetricSettings)}::text::jsonb)
				on conflict (rig_id, client_run_id) do nothing
				returning *, metric_settings::text as settings_text`;
			row = inserted[0];
			if (!row) {
				// opened concurrently by another connection of the same rig
				[row] = await this.#sql<
					RunRow[]
				>`select *, metric_settings::text as settings_text from runs where rig_id = ${req.rig.rigId} and client_run_id = ${req.clientRunId}`;
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
			settingsText: row.settings_text ?? '',
			keyId: req.rig.keyId,
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
			const [row] = await this.#sql<
				RunRow[]
			>`select *, metric_settings::text as settings_text from runs where id = ${runId}`;
			ctx = {
				stateFields: row.state_fields,
				measurementFields: row.measurement_fields,
				coords: row.coords,
				settings: row.metric_settings ?? defaultMetricSettings,
				settingsText: row.settings_text ?? '',
				keyId: null,
				committedNext: null
			};
			this.#runs.set(runId, ctx);
		}
		return ctx;
	}

	/** Per-frame rows are computed as frames arrive, overlapping the previous batch's commit. */
	prepareFrame(runId: string, frame: FrameToStore): void {
		const ctx = this.#runs.get(runId);
		if (ctx && !this.#prepared.has(frame))
			this.#prepared.set(frame, {
				row: this.#prepare(runId, frame, ctx),
				settingsText: ctx.settingsText
			});
	}

	/**
	 * Inside a commit's transaction, before anything is written: locks the run's row and recomputes the rows
	 * prepared with settings a save has replaced since. A settings save (saveSettings updates the same row)
	 * thus lands wholly before a commit or after it: every frame stored after a save is computed with what it
	 * saved, and the recompute job that follows the save covers every frame stored before. The usual commit
	 * skips this round trip: its counters' update takes the lock at the end and returns the settings, and a
	 * commit whose rows turn out computed with replaced settings rolls back and is made again through here.
	 */
	async #withCurrentSettings(
		tx: postgres.TransactionSql,
		runId: string,
		ctx: RunContext,
		frames: FrameToStore[],
		prepared: PreparedRow[],
		preparedWith: string[]
	): Promise<void> {
		const [row] = await tx<{ settings_text: string | null }[]>`
			select metric_settings::text as settings_text from runs where id = ${runId} for no key update`;
		const text = row?.settings_text ?? '';
		if (text !== ctx.settingsText) {
			ctx.settings = text === '' ? defaultMetricSettings : (JSON.parse(text) as MetricSettings);
			ctx.settingsText = text;
		}
		const stale = frames.flatMap((_, i) => (preparedWith[i] === text ? [] : [i]));
		const again = await Promise.all(stale.map((i) => this.#prepare(runId, frames[i], ctx)));
		stale.forEach((i, k) => {
			prepared[i] = again[k];
			preparedWith[i] = text;
		});
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
	): Promise<CommitOutcome> {
		if (frames.length === 0 && quarantined.length === 0) return { refused: [] };
		const ctx = await this.#context(runId);
		const pending = frames.map(
			(f) =>
				this.#prepared.get(f) ?? {
					row: this.#prepare(runId, f, ctx),
					settingsText: ctx.settingsText
				}
		);
		const prepared = await Promise.all(pending.map((p) => p.row));
		const preparedWith = pending.map((p) => p.settingsText);
		let maxSeq = -1;
		for (const f of frames) maxSeq = Math.max(maxSeq, f.seq);
		for (const q of quarantined) maxSeq = Math.max(maxSeq, q.seq);
		const lastT = frames.length ? frames[frames.length - 1].t : null;
		const firstT = frames.length ? frames[0].t : null;

		// `lockFirst`: read the settings under the run's row lock before writing; otherwise they are checked at
		// the end, by the counters' update (which takes the same lock), and a save in between rolls back
		const commit = (viaCopy: boolean, lockFirst: boolean) =>
			this.#sql.begin(async (tx) => {
				if (lockFirst)
					await this.#withCurrentSettings(tx, runId, ctx, frames, prepared, preparedWith);
				let stored = 0;
				if (frames.length && viaCopy) {
					await copyFrames(
						tx,
						prepared.map((p) => p.tuple)
					);
					stored = frames.length;
				} else if (frames.length) {
					const values = frames.map((f, i) => insertRow(tx, runId, f, prepared[i]));
					const res = await tx`insert into frames ${tx(values)} on conflict do nothing`;
					stored = res.count;
				}
				const settingsText = await finishBatch(tx, runId, ctx.keyId, quarantined, {
					nextSeq: maxSeq + 1,
					stored,
					firstT,
					lastT
				});
				if (preparedWith.some((t) => t !== settingsText)) throw new SettingsSaved();
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
			await ensurePartitionsFor(
				this.#sql,
				frames.map((f) => f.t)
			);
			await commit(fresh, false).catch((err: unknown) => {
				if (!(err instanceof SettingsSaved)) throw err;
				return commit(fresh, true);
			});
			ctx.committedNext = Math.max(ctx.committedNext ?? 0, maxSeq + 1);
			return { refused: [] };
		} catch (err) {
			ctx.committedNext = null; // the outcome is unknown: ask the database next time
			if (!refusedForContent(err) && !(err instanceof CopyIncomplete)) throw err;
			// Something in the batch was refused for what it holds, or a COPY failed without saying why (postgres.js
			// does not report COPY errors): store it frame by frame, so a frame the database refuses is quarantined
			// with its reason instead of failing the batch, and being resent, forever.
			const refused = await this.#commitOneByOne(
				runId,
				ctx,
				frames,
				prepared,
				preparedWith,
				quarantined
			);
			ctx.committedNext = maxSeq + 1;
			return { refused };
		}
	}

	/**
	 * One transaction; each frame in its own savepoint. A frame the database refuses for its content is
	 * quarantined (as its stored MessagePack) with the database's message; any other failure rejects it all.
	 */
	async #commitOneByOne(
		runId: string,
		ctx: RunContext,
		frames: FrameToStore[],
		prepared: PreparedRow[],
		preparedWith: string[],
		quarantined: QuarantinedToStore[]
	): Promise<QuarantinedToStore[]> {
		let maxSeq = -1;
		for (const f of frames) maxSeq = Math.max(maxSeq, f.seq);
		for (const q of quarantined) maxSeq = Math.max(maxSeq, q.seq);
		return this.#sql.begin(async (tx) => {
			await this.#withCurrentSettings(tx, runId, ctx, frames, prepared, preparedWith);
			const refused: QuarantinedToStore[] = [];
			let stored = 0;
			let firstT: number | null = null;
			let lastT: number | null = null;
			for (let i = 0; i < frames.length; i++) {
				const f = frames[i];
				try {
					const n = await tx.savepoint(async (sp) => {
						await sp`select skein_ensure_frames_partition(${new Date(f.t * 1000)}::timestamptz)`;
						const row = insertRow(sp, runId, f, prepared[i]);
						return (await sp`insert into frames ${sp(row)} on conflict do nothing`).count;
					});
					stored += n;
					firstT ??= f.t;
					lastT = f.t;
				} catch (err) {
					if (!refusedForContent(err)) throw err;
					const message = err instanceof Error ? err.message : String(err);
					refused.push({
						seq: f.seq,
						raw: f.raw,
						encoding: 'msgpack',
						reason: `the database refused this frame: ${message}`
					});
				}
			}
			await finishBatch(tx, runId, ctx.keyId, [...quarantined, ...refused], {
				nextSeq: maxSeq + 1,
				stored,
				firstT,
				lastT
			});
			return refused;
		});
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

/**
 * Whether an error is about what a statement's data holds rather than the database being unavailable (then
 * retrying cannot help). SQLSTATE classes (PostgreSQL documentation, Appendix A): 22 data exception (22021 a
 * NUL in text, 22008 a timestamp out of range, 22P05 `\u0000` in jsonb…), 23 integrity constraint violation
 * (23514: no partition holds the row) except 23505, a duplicate key, which a resend resolves; 54 program limit
 * exceeded (a value too large to index). A RangeError is a value postgres.js could not serialise (an invalid Date).
 */
export function refusedForContent(err: unknown): boolean {
	if (err instanceof RangeError) return true;
	if (!(err instanceof Error) || err.name !== 'PostgresError' || !('code' in err)) return false;
	const code = err.code;
	return typeof code === 'string' && /^(22|23|54)[0-9A-Z]{3}$/.test(code) && code !== '23505';
}

/** Text PostgreSQL stores: NUL and unpaired surrogates written as \uXXXX (validation keeps them out of reasons). */
function storableText(s: string): string {
	return s.replace(
		/\0|[\ud800-\udbff](?![\udc00-\udfff])|(?<![\ud800-\udbff])[\udc00-\udfff]/g,
		(c) => `\\u${c.charCodeAt(0).toString(16).padStart(4, '0')}`
	);
}

/**
 * The batch's quarantined messages, the run's counters and the key's frame count (one round trip for the two);
 * returns the run's metric settings as jsonb text ('' for none), read under the row lock the update takes.
 */
async function finishBatch(
	tx: postgres.TransactionSql,
	runId: string,
	keyId: string | null,
	quarantined: QuarantinedToStore[],
	c: { nextSeq: number; stored: number; firstT: number | null; lastT: number | null }
): Promise<string> {
	if (quarantined.length) {
		await tx`insert into quarantine ${tx(
			quarantined.map((q) => ({
				run_id: runId,
				seq: q.seq,
				reason: storableText(q.reason),
				raw: Buffer.from(q.raw.buffer, q.raw.byteOffset, q.raw.byteLength)
			}))
		)}`;
	}
	// a data-modifying WITH runs whether or not the main query reads it
	const [run] = await tx<{ settings_text: string | null }[]>`
		with run as (
			update runs set
				next_seq = greatest(next_seq, ${c.nextSeq}),
				frame_count = frame_count + ${c.stored},
				quarantine_count = quarantine_count + ${quarantined.length},
				first_t = coalesce(first_t, ${c.firstT}),
				last_t = coalesce(${c.lastT}, last_t),
				last_seen_at = now()
			where id = ${runId}
			returning metric_settings::text as settings_text
		), key as (
			update feed_keys set frames_received = frames_received + ${c.stored}
			where id = ${keyId ?? null}::uuid and ${c.stored} > 0 and exists (select 1 from run)
		)
		select settings_text from run`;
	return run?.settings_text ?? '';
}

/** A frame's row for an INSERT (zones as jsonb). */
function insertRow(tx: postgres.TransactionSql, runId: string, f: FrameToStore, p: PreparedRow) {
	const r = rowOf(runId, f, p.metrics, p.cardinalitySd);
	return { ...r, zones: r.zones === null ? null : tx.json(r.zones) };
}

/** The run's metric settings were saved while a commit's rows were computed with the ones before. */
class SettingsSaved extends Error {}

/** A COPY that did not complete in time: postgres.js does not report why, so the batch is retried row by row. */
class CopyIncomplete extends Error {}

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
				() => reject(new CopyIncomplete('COPY into frames did not complete')),
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
