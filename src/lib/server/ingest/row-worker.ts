/**
 * Worker thread of the ingest store: computes the rows of accepted frames (per-frame metrics and the binary
 * COPY tuple) off the thread that serves the sockets. Frames reach it already validated; it reads them again
 * with the fast reader, or decodes them when that declines (e.g. a set larger than the default limits).
 * Messages: see row-pool.ts.
 */
import { readlinkSync } from 'node:fs';
import { constants, setPriority } from 'node:os';
import { parentPort, workerData } from 'node:worker_threads';
import { fromMsgpack } from '$lib/protocol/codec';
import { readFrame } from '$lib/protocol/frame-reader';
import { DEFAULT_LIMITS } from '$lib/protocol/limits';
import type { MetricFrame } from '$lib/metrics/frame';
import { frameTuple, uuidBytes } from './copy-binary';
import { cardinalitySd, frameMetricsFor, rowOf } from './frame-rows';
import { packMetrics, type RowBatch, type RowBatchResult, type RowWorkerData } from './row-pool';

if ((workerData as RowWorkerData | undefined)?.lowPriority) {
	try {
		// Linux: /proc/thread-self names this thread's id, and setpriority on a thread id sets that thread alone
		const tid = Number(readlinkSync('/proc/thread-self').split('/').pop());
		if (Number.isInteger(tid) && tid > 0) setPriority(tid, constants.priority.PRIORITY_LOW);
	} catch {
		// elsewhere the heavy lane runs at normal priority: still isolated, only not yielding the CPU
	}
}

const limits = {
	...DEFAULT_LIMITS,
	maxSetSize: Number.MAX_SAFE_INTEGER,
	maxPairs: Number.MAX_SAFE_INTEGER
};

function rows(batch: RowBatch): RowBatchResult {
	const runIds = batch.runs.map((r) => uuidBytes(r.runId));
	const data = new Uint8Array(batch.data);
	const tuples: Buffer[] = [];
	const ends = new Int32Array(batch.seq.length);
	const metrics: number[] = [];
	const ms = new Float64Array(batch.seq.length);
	let total = 0;
	for (let i = 0; i < batch.seq.length; i++) {
		const started = performance.now();
		const run = batch.runs[batch.run[i]];
		const raw = data.subarray(batch.start[i], batch.start[i] + batch.length[i]);
		const frame: MetricFrame =
			readFrame(raw, run.dims, limits) ?? (fromMsgpack(raw) as MetricFrame);
		const m = frameMetricsFor(frame, run.ctx);
		const sd = cardinalitySd(frame);
		const tuple = frameTuple(
			runIds[batch.run[i]],
			rowOf(run.runId, { seq: batch.seq[i], t: batch.t[i], raw }, m, sd)
		);
		tuples.push(tuple);
		total += tuple.length;
		ends[i] = total;
		packMetrics(metrics, m, sd, run.ctx.settings.zones);
		ms[i] = performance.now() - started;
	}
	const out = new Uint8Array(total);
	let o = 0;
	for (const tuple of tuples) {
		out.set(tuple, o);
		o += tuple.length;
	}
	return { id: batch.id, tuples: out.buffer, ends, metrics: Float64Array.from(metrics), ms };
}

parentPort?.on('message', (batch: RowBatch) => {
	let result: RowBatchResult | { id: number; error: string };
	try {
		result = rows(batch);
	} catch (e) {
		result = { id: batch.id, error: e instanceof Error ? e.message : String(e) };
	}
	parentPort?.postMessage(result, 'tuples' in result ? [result.tuples] : []);
});
