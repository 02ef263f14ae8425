/**
 * The commit of one batch: frames (binary COPY when none of their seqs can be stored yet, insert-or-skip
 * otherwise), quarantined messages and the run's and key's counters, in ONE transaction.
 */
import type postgres from 'postgres';
import type { FrameToStore, QuarantinedToStore } from './contract';
import { copyHeader, copyTrailer, frameCopyColumns } from './copy-binary';
import { rowOf } from './frame-rows';
import { ensurePartitionsFor } from './partitions';
import type { PreparedRow } from './row-pool';
import type { RunContext } from './run-cache';

/** Stores the batch (`prepared[i]` is the row of `frames[i]`) and advances `ctx.committedNext`. */
export async function commitBatch(
	sql: postgres.Sql,
	runId: string,
	ctx: RunContext,
	frames: FrameToStore[],
	prepared: PreparedRow[],
	quarantined: QuarantinedToStore[]
): Promise<void> {
	await ensurePartitionsFor(
		sql,
		frames.map((f) => f.t)
	);
	let maxSeq = -1;
	for (const f of frames) maxSeq = Math.max(maxSeq, f.seq);
	for (const q of quarantined) maxSeq = Math.max(maxSeq, q.seq);
	const lastT = frames.length ? frames[frames.length - 1].t : null;
	const firstT = frames.length ? frames[0].t : null;

	const commit = (viaCopy: boolean) =>
		sql.begin(async (tx) => {
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
		const [dup] = await sql<{ n: number }[]>`
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
