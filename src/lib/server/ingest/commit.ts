/**
 * The commit of one batch: frames (binary COPY when none of their seqs can be stored yet, insert-or-skip
 * otherwise), quarantined messages and the run's and key's counters, in ONE transaction. The counters' update
 * also reads the run's metric settings under its row lock: a batch computed with settings a save has replaced
 * rolls back and is made again with the saved ones. A batch the database refuses for what a frame holds is
 * stored frame by frame in savepoints, the refused frames quarantined.
 */
import type postgres from 'postgres';
import type { CommitOutcome, FrameToStore, QuarantinedToStore } from './contract';
import { copyHeader, copyTrailer, frameCopyColumns } from './copy-binary';
import { rowOf } from './frame-rows';
import { ensurePartitionsFor } from './partitions';
import type { RowFor } from './prepare';
import { refusalReason, refusedForContent, storableText } from './refused';
import type { PreparedRow } from './row-pool';
import { adoptSettings, type RunContext } from './run-cache';

/** One run's batch: `rows[i]` is the row of `frames[i]`, with the settings it was computed with. */
export interface Batch {
	runId: string;
	ctx: RunContext;
	frames: FrameToStore[];
	rows: RowFor[];
	quarantined: QuarantinedToStore[];
	/** a frame's row computed again with the context's settings now */
	recompute(frame: FrameToStore): Promise<RowFor>;
}

/** What the run's counters advance by. */
interface Counters {
	nextSeq: number;
	stored: number;
	firstT: number | null;
	lastT: number | null;
}

/**
 * Stores the batch and advances `ctx.committedNext`. Rejects only when storage is unavailable (nothing of the batch stored); frames the
 * database refuses for their content come back as refused, quarantined.
 */
export async function commitBatch(sql: postgres.Sql, batch: Batch): Promise<CommitOutcome> {
	const { runId, ctx, frames, rows, quarantined } = batch;
	const nextSeq = nextSeqAfter(frames, quarantined);
	const lastT = frames.length ? frames[frames.length - 1].t : null;
	const firstT = frames.length ? frames[0].t : null;

	// `lockFirst`: read the settings under the run's row lock before writing; otherwise they are checked at
	// the end, by the counters' update (which takes the same lock), and a save in between rolls back
	const commit = (viaCopy: boolean, lockFirst: boolean) =>
		sql.begin(async (tx) => {
			if (lockFirst) await withCurrentSettings(tx, batch);
			let stored = 0;
			if (frames.length && viaCopy) {
				await copyFrames(
					tx,
					rows.map((r) => r.row.tuple)
				);
				stored = frames.length;
			} else if (frames.length) {
				const values = frames.map((f, i) => insertRow(tx, runId, f, rows[i].row));
				const res = await tx`insert into frames ${tx(values)} on conflict do nothing`;
				stored = res.count;
			}
			const settingsText = await finishBatch(tx, runId, ctx.keyId, quarantined, {
				nextSeq,
				stored,
				firstT,
				lastT
			});
			if (rows.some((r) => r.settingsText !== settingsText)) throw new SettingsSaved();
		});
	// COPY cannot skip rows that exist, and postgres.js leaves a failed COPY unsettled; so COPY only when
	// none of these seqs can be stored yet: above what this store committed for the run (the normal case),
	// or, when it does not know, when the database says so; insert-or-skip otherwise.
	const seqs = frames.map((f) => f.seq);
	let fresh =
		seqs.length === 0 || (ctx.committedNext !== null && Math.min(...seqs) >= ctx.committedNext);
	if (!fresh) {
		const [dup] = await sql<{ n: number }[]>`
			select count(*)::int as n from frames where run_id = ${runId} and seq = any(${seqs}::bigint[])`;
		fresh = dup.n === 0;
	}
	try {
		await ensurePartitionsFor(
			sql,
			frames.map((f) => f.t)
		);
		await commit(fresh, false).catch((err: unknown) => {
			if (!(err instanceof SettingsSaved)) throw err;
			return commit(fresh, true);
		});
		ctx.committedNext = Math.max(ctx.committedNext ?? 0, nextSeq);
		return { refused: [] };
	} catch (err) {
		ctx.committedNext = null; // the outcome is unknown: ask the database next time
		if (!refusedForContent(err) && !(err instanceof CopyIncomplete)) throw err;
		// Something in the batch was refused for what it holds, or a COPY failed without saying why (postgres.js
		// does not report COPY errors): store it frame by frame, so a frame the database refuses is quarantined
		// with its reason instead of failing the batch, and being resent, forever.
		const refused = await commitOneByOne(sql, batch);
		ctx.committedNext = nextSeq;
		return { refused };
	}
}

/**
 * Inside a commit's transaction, before anything is written: locks the run's row and recomputes the rows
 * computed with settings a save has replaced since. A settings save (saveSettings updates the same row)
 * thus lands wholly before a commit or after it: every frame stored after a save is computed with what it
 * saved, and the recompute job that follows the save covers every frame stored before. The usual commit
 * skips this round trip: its counters' update takes the lock at the end and returns the settings, and a
 * commit whose rows turn out computed with replaced settings rolls back and is made again through here.
 */
async function withCurrentSettings(tx: postgres.TransactionSql, batch: Batch): Promise<void> {
	const { runId, ctx, frames, rows } = batch;
	const [row] = await tx<{ settings_text: string | null }[]>`
		select metric_settings::text as settings_text from runs where id = ${runId} for no key update`;
	adoptSettings(ctx, row?.settings_text ?? null);
	const stale = frames.flatMap((_, i) => (rows[i].settingsText === ctx.settingsText ? [] : [i]));
	const again = await Promise.all(stale.map((i) => batch.recompute(frames[i])));
	stale.forEach((i, k) => (rows[i] = again[k]));
}

/**
 * One transaction; each frame in its own savepoint. A frame the database refuses for its content is
 * quarantined (as its stored MessagePack) with the database's message; any other failure rejects it all.
 */
async function commitOneByOne(sql: postgres.Sql, batch: Batch): Promise<QuarantinedToStore[]> {
	const { runId, ctx, frames, rows, quarantined } = batch;
	const nextSeq = nextSeqAfter(frames, quarantined);
	return sql.begin(async (tx) => {
		await withCurrentSettings(tx, batch);
		const refused: QuarantinedToStore[] = [];
		let stored = 0;
		let firstT: number | null = null;
		let lastT: number | null = null;
		for (let i = 0; i < frames.length; i++) {
			const f = frames[i];
			try {
				const n = await tx.savepoint(async (sp) => {
					await sp`select skein_ensure_frames_partition(${new Date(f.t * 1000)}::timestamptz)`;
					const row = insertRow(sp, runId, f, rows[i].row);
					return (await sp`insert into frames ${sp(row)} on conflict do nothing`).count;
				});
				stored += n;
				firstT ??= f.t;
				lastT = f.t;
			} catch (err) {
				if (!refusedForContent(err)) throw err;
				refused.push({
					seq: f.seq,
					raw: f.raw,
					encoding: 'msgpack',
					reason: `the database refused this frame: ${refusalReason(err)}`
				});
			}
		}
		await finishBatch(tx, runId, ctx.keyId, [...quarantined, ...refused], {
			nextSeq,
			stored,
			firstT,
			lastT
		});
		return refused;
	});
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
	c: Counters
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

/** 1 + the highest seq of the batch. */
function nextSeqAfter(frames: FrameToStore[], quarantined: QuarantinedToStore[]): number {
	let maxSeq = -1;
	for (const f of frames) maxSeq = Math.max(maxSeq, f.seq);
	for (const q of quarantined) maxSeq = Math.max(maxSeq, q.seq);
	return maxSeq + 1;
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
