/**
 * The ingest store's per-frame work in a worker thread (row-worker.ts): the socket thread validates frames
 * and talks to PostgreSQL; the metrics and the COPY tuple of each frame are computed on the other core
 * meanwhile. Frames accepted in the same turn of the event loop travel together, their bytes copied into one
 * transferred buffer; the results come back the same way, in order.
 *
 * If the worker fails, every frame waiting for it fails, and so does the commit that needs them: the rig's
 * connection closes and it resumes from what is stored, as after any storage failure. The next frame starts
 * a new worker.
 */
import { Worker } from 'node:worker_threads';
import type { FrameMetrics } from '$lib/metrics/frame';
import type { Zone } from '$lib/metrics/zones';
import type { RunDims } from '$lib/protocol/validate';
import { logger } from '../log';
import type { RowContext } from './frame-rows';

export interface RowBatch {
	id: number;
	runs: { runId: string; ctx: RowContext; dims: RunDims }[];
	/** per frame: index into runs, seq, t, and where its bytes lie in `data` */
	run: Int32Array;
	seq: Float64Array;
	t: Float64Array;
	start: Int32Array;
	length: Int32Array;
	data: ArrayBuffer;
}

export interface RowBatchResult {
	id: number;
	/** the frames' binary COPY tuples, one after another; frame i ends at ends[i] */
	tuples: ArrayBuffer;
	ends: Int32Array;
	/** per frame, packMetrics' values */
	metrics: Float64Array;
}

/** A frame's row, ready for COPY, and its metrics for live viewers. */
export interface PreparedRow {
	tuple: Uint8Array;
	metrics: FrameMetrics;
	cardinalitySd: number | null;
}

const FIXED = 12;
const nullable = (v: number | null) => (v === null ? NaN : v);
const orNull = (v: number) => (Number.isNaN(v) ? null : v);

/** Appends a frame's metrics as numbers (NaN for null and for a zone not computed), zones in settings order. */
export function packMetrics(
	out: number[],
	m: FrameMetrics,
	cardinalitySd: number | null,
	zones: readonly Zone[]
): void {
	out.push(
		nullable(m.n_truth),
		nullable(m.n_estimates),
		nullable(m.n_measurements),
		nullable(m.expected_cardinality),
		nullable(m.gospa),
		nullable(m.gospa_localization),
		nullable(m.gospa_missed),
		nullable(m.gospa_false),
		nullable(m.ospa),
		nullable(m.nees_mean),
		m.nees_count,
		nullable(cardinalitySd)
	);
	for (const z of zones) out.push(m.zones[z.name] ?? NaN);
}

function unpackMetrics(
	v: Float64Array,
	o: number,
	zones: readonly Zone[]
): { metrics: FrameMetrics; cardinalitySd: number | null } {
	const zoneValues: Record<string, number> = {};
	zones.forEach((z, k) => {
		const p = v[o + FIXED + k];
		if (!Number.isNaN(p)) zoneValues[z.name] = p;
	});
	return {
		metrics: {
			n_truth: orNull(v[o]),
			n_estimates: orNull(v[o + 1]),
			n_measurements: orNull(v[o + 2]),
			expected_cardinality: orNull(v[o + 3]),
			gospa: orNull(v[o + 4]),
			gospa_localization: orNull(v[o + 5]),
			gospa_missed: orNull(v[o + 6]),
			gospa_false: orNull(v[o + 7]),
			ospa: orNull(v[o + 8]),
			nees_mean: orNull(v[o + 9]),
			nees_count: v[o + 10],
			zones: zoneValues
		},
		cardinalitySd: orNull(v[o + 11])
	};
}

interface Waiting {
	runId: string;
	ctx: RowContext;
	dims: RunDims;
	seq: number;
	t: number;
	raw: Uint8Array;
	resolve: (row: PreparedRow) => void;
	reject: (error: Error) => void;
}

/**
 * The worker is TypeScript, run through tsx like the rest of the server. tsx's `--import` hook does not reach
 * worker threads, so the worker starts from a small script that registers tsx and then imports it.
 */
function startWorker(entryUrl: URL): Worker {
	const entry = entryUrl.href;
	// resolved here, so the worker finds tsx whatever the working directory (Vite's SSR runner has no resolve)
	const tsx =
		typeof import.meta.resolve === 'function' ? import.meta.resolve('tsx/esm/api') : 'tsx/esm/api';
	const boot = `import(${JSON.stringify(tsx)}).then((tsx) => { tsx.register(); return import(${JSON.stringify(entry)}); })`;
	return new Worker(boot, { eval: true });
}

/** workers in a row that failed before computing anything; after this many the pool stands aside */
const MAX_BOOT_FAILURES = 3;

export class RowPool {
	#worker: Worker | null = null;
	#queue: Waiting[] = [];
	#flushQueued = false;
	/** batches posted and not answered, by id, with the worker computing them */
	#inFlight = new Map<number, { worker: Worker; items: Waiting[] }>();
	#nextId = 0;
	#bootFailures = 0;
	/** workers stopped on purpose: their exit is no failure */
	#stopped = new WeakSet<Worker>();
	#entry: URL;

	/** `entry`: the worker's module (tests start a broken one) */
	constructor(entry: URL = new URL('./row-worker.ts', import.meta.url)) {
		this.#entry = entry;
	}

	/**
	 * False once workers keep failing before computing anything (e.g. tsx cannot be loaded in a worker here):
	 * the store then computes rows inline rather than failing every commit.
	 */
	get usable(): boolean {
		return this.#bootFailures < MAX_BOOT_FAILURES;
	}

	prepare(
		runId: string,
		ctx: RowContext,
		dims: RunDims,
		f: { seq: number; t: number; raw: Uint8Array }
	): Promise<PreparedRow> {
		return new Promise((resolve, reject) => {
			this.#queue.push({ runId, ctx, dims, seq: f.seq, t: f.t, raw: f.raw, resolve, reject });
			if (!this.#flushQueued) {
				this.#flushQueued = true;
				setImmediate(() => this.#flush());
			}
		});
	}

	#flush(): void {
		this.#flushQueued = false;
		const items = this.#queue;
		if (items.length === 0) return;
		this.#queue = [];
		const runs: RowBatch['runs'] = [];
		// one entry per run and settings: a run's frames computed before and after a settings save may meet here
		const runIndex = new Map<string, Map<RowContext['settings'], number>>();
		let total = 0;
		for (const w of items) total += w.raw.byteLength;
		const data = new Uint8Array(total);
		const batch: RowBatch = {
			id: this.#nextId++,
			runs,
			run: new Int32Array(items.length),
			seq: new Float64Array(items.length),
			t: new Float64Array(items.length),
			start: new Int32Array(items.length),
			length: new Int32Array(items.length),
			data: data.buffer
		};
		let o = 0;
		items.forEach((w, i) => {
			let bySettings = runIndex.get(w.runId);
			if (bySettings === undefined) runIndex.set(w.runId, (bySettings = new Map()));
			let r = bySettings.get(w.ctx.settings);
			if (r === undefined) {
				r = runs.length;
				runs.push({ runId: w.runId, ctx: w.ctx, dims: w.dims });
				bySettings.set(w.ctx.settings, r);
			}
			batch.run[i] = r;
			batch.seq[i] = w.seq;
			batch.t[i] = w.t;
			batch.start[i] = o;
			batch.length[i] = w.raw.byteLength;
			data.set(w.raw, o);
			o += w.raw.byteLength;
		});
		const worker = this.#ensureWorker();
		this.#inFlight.set(batch.id, { worker, items });
		// the worker keeps the process alive only while it has work: an idle pool never holds up an exit
		worker.ref();
		worker.postMessage(batch, [data.buffer]);
	}

	#ensureWorker(): Worker {
		if (this.#worker) return this.#worker;
		const worker = startWorker(this.#entry);
		let answered = false;
		worker.on('message', (msg: RowBatchResult | { id: number; error: string }) => {
			answered = true;
			this.#bootFailures = 0;
			this.#done(msg);
		});
		let failed = false;
		const fail = (error: Error) => {
			if (this.#worker === worker) this.#worker = null;
			// 'error' and 'exit' may both come: one failure
			if (!answered && !failed && !this.#stopped.has(worker)) {
				this.#bootFailures++;
				if (!this.usable)
					logger.error({ err: error }, 'the row worker does not start; computing rows inline');
			}
			failed = true;
			// only this worker's batches: a new worker may already be computing others
			for (const [id, batch] of this.#inFlight) {
				if (batch.worker !== worker) continue;
				this.#inFlight.delete(id);
				for (const w of batch.items) w.reject(error);
			}
		};
		worker.on('error', fail);
		worker.on('exit', (code) => fail(new Error(`row worker exited with code ${code}`)));
		// after the listeners: adding a 'message' listener refs the worker again
		worker.unref();
		this.#worker = worker;
		return worker;
	}

	#done(msg: RowBatchResult | { id: number; error: string }): void {
		const batch = this.#inFlight.get(msg.id);
		if (!batch) return;
		this.#inFlight.delete(msg.id);
		if (![...this.#inFlight.values()].some((b) => b.worker === batch.worker)) batch.worker.unref();
		const items = batch.items;
		if ('error' in msg) {
			for (const w of items) w.reject(new Error(`row worker: ${msg.error}`));
			return;
		}
		const tuples = new Uint8Array(msg.tuples);
		let start = 0;
		let o = 0;
		items.forEach((w, i) => {
			const { metrics, cardinalitySd } = unpackMetrics(msg.metrics, o, w.ctx.settings.zones);
			o += FIXED + w.ctx.settings.zones.length;
			w.resolve({ tuple: tuples.subarray(start, msg.ends[i]), metrics, cardinalitySd });
			start = msg.ends[i];
		});
	}

	/** Stops the worker; frames waiting for it fail. */
	async close(): Promise<void> {
		const worker = this.#worker;
		this.#worker = null;
		if (!worker) return;
		this.#stopped.add(worker);
		await worker.terminate();
	}
}
