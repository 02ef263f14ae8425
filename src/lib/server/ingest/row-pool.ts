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
import { availableParallelism } from 'node:os';
import { Worker } from 'node:worker_threads';
import type { FrameMetrics, MetricFrame } from '$lib/metrics/frame';
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
	/** per frame, milliseconds the worker spent on it */
	ms: Float64Array;
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
function startWorker(entryUrl: URL, workerData: RowWorkerData): Worker {
	const entry = entryUrl.href;
	// resolved here, so the worker finds tsx whatever the working directory (Vite's SSR runner has no resolve)
	const tsx =
		typeof import.meta.resolve === 'function' ? import.meta.resolve('tsx/esm/api') : 'tsx/esm/api';
	const boot = `import(${JSON.stringify(tsx)}).then((tsx) => { tsx.register(); return import(${JSON.stringify(entry)}); })`;
	return new Worker(boot, { eval: true, workerData });
}

export interface RowWorkerData {
	/**
	 * the heavy lane's workers run at the lowest CPU priority (Linux: the thread's nice value), so that on a
	 * busy machine the socket thread and the shared worker are served first and a heavy run only takes what
	 * is left
	 */
	lowPriority: boolean;
}

/** workers in a row that failed before computing anything; after this many the pool stands aside */
const MAX_BOOT_FAILURES = 3;

/**
 * A frame whose worst-case work is estimated above this many nanoseconds goes to the heavy lane. Ordinary
 * frames (tens of objects) estimate at tens of µs; the bound keeps what the shared worker may spend on
 * one frame to a few ms, so a batch of other runs' frames never waits long behind it.
 */
export const HEAVY_FRAME_NS = 2_000_000;
/**
 * two frames of a run in a row that really took this long in the shared worker mark the run heavy (the
 * estimate missed); one alone may be a cold worker or a garbage collection
 */
const HEAVY_MEASURED_MS = 20;
/** how long a run stays heavy after such a frame */
const HEAVY_RUN_MS = 30_000;

/**
 * Worst-case nanoseconds of a frame's row, roughly (measured on one core of the development machine): the
 * GOSPA assignment, at worst a k × k group costing about k³ (min(m, n) · m · n), 2 ns per step; NEES on each
 * pair (dim³); zone occupancy per estimate and zone, 1 µs; decoding, 5 ns a byte. Unknown sets count as empty.
 */
export function frameWorkNs(
	frame: MetricFrame | undefined,
	bytes: number,
	zones: number,
	dim: number
): number {
	const m = frame?.truth?.length ?? 0;
	const n = frame?.estimates?.length ?? 0;
	const k = Math.min(m, n);
	return 2 * k * m * n + k * dim * dim * dim + 1000 * n * zones + 5 * bytes;
}

/** A worker and what it is doing; the heavy lane's workers compute one run's frame at a time. */
interface Slot {
	worker: Worker | null;
	/** heavy lane: the run whose frame is in work, or null when idle */
	run: string | null;
}

/**
 * Two lanes, so that no run's frames wait behind another run's expensive ones:
 * - the shared lane, one worker: every frame estimated cheap (frameWorkNs), batched per turn of the event loop;
 * - the heavy lane, up to `heavyWorkers` workers: frames estimated expensive, or of a run whose frames proved
 *   expensive, queued per run and taken one frame at a time, runs in turn, never two workers on one run.
 * A heavy run thus waits for its own frames (and, with more heavy runs than heavy workers, for one frame
 * of each other heavy run at a time), never the shared lane for it.
 */
export class RowPool {
	#shared: Slot = { worker: null, run: null };
	#heavy: Slot[];
	#queue: Waiting[] = [];
	#flushQueued = false;
	/** heavy frames waiting, per run; the map's order is the order runs get their turn */
	#heavyQueues = new Map<string, Waiting[]>();
	/** when each run with heavy frames last had one taken, so runs take turns */
	#lastServed = new Map<string, number>();
	#turn = 0;
	/** runs whose frames took long in the shared worker, until when they count as heavy */
	#heavyRuns = new Map<string, number>();
	/** runs whose last frame in the shared worker took long */
	#slowOnce = new Set<string>();
	/** batches posted and not answered, by id, with the slot computing them */
	#inFlight = new Map<number, { slot: Slot; worker: Worker; items: Waiting[] }>();
	#nextId = 0;
	#bootFailures = 0;
	/** workers stopped on purpose: their exit is no failure */
	#stopped = new WeakSet<Worker>();
	#entry: URL;
	#heavyNs: number;

	/**
	 * `entry`: the worker's module (tests start a broken one). `heavyWorkers`: workers of the heavy lane, by
	 * default one per core beyond the first two (the socket thread and the shared worker), at least one.
	 * `heavyNs`: the estimate above which a frame is heavy.
	 */
	constructor(
		entry: URL = new URL('./row-worker.ts', import.meta.url),
		options: { heavyWorkers?: number; heavyNs?: number } = {}
	) {
		this.#entry = entry;
		const heavyWorkers =
			options.heavyWorkers ?? Math.min(4, Math.max(1, availableParallelism() - 1));
		this.#heavy = Array.from({ length: heavyWorkers }, () => ({ worker: null, run: null }));
		this.#heavyNs = options.heavyNs ?? HEAVY_FRAME_NS;
	}

	/**
	 * False once workers keep failing before computing anything (e.g. tsx cannot be loaded in a worker here):
	 * the store then computes rows inline rather than failing every commit.
	 */
	get usable(): boolean {
		return this.#bootFailures < MAX_BOOT_FAILURES;
	}

	/** `f.frame`, when given, is what the lane is chosen by (its set sizes); without it the frame counts as cheap. */
	prepare(
		runId: string,
		ctx: RowContext,
		dims: RunDims,
		f: { seq: number; t: number; raw: Uint8Array; frame?: MetricFrame }
	): Promise<PreparedRow> {
		return new Promise((resolve, reject) => {
			const w: Waiting = { runId, ctx, dims, seq: f.seq, t: f.t, raw: f.raw, resolve, reject };
			if (this.#isHeavy(runId, ctx, dims, f)) {
				const q = this.#heavyQueues.get(runId);
				if (q) q.push(w);
				else this.#heavyQueues.set(runId, [w]);
				this.#dispatchHeavy();
				return;
			}
			this.#queue.push(w);
			if (!this.#flushQueued) {
				this.#flushQueued = true;
				setImmediate(() => this.#flush());
			}
		});
	}

	#isHeavy(
		runId: string,
		ctx: RowContext,
		dims: RunDims,
		f: { raw: Uint8Array; frame?: MetricFrame }
	): boolean {
		const until = this.#heavyRuns.get(runId);
		if (until !== undefined) {
			if (Date.now() < until) return true;
			this.#heavyRuns.delete(runId);
		}
		if (ctx.metrics === false) return false;
		const work = frameWorkNs(f.frame, f.raw.byteLength, ctx.settings.zones.length, dims.stateDim);
		return work > this.#heavyNs;
	}

	#flush(): void {
		this.#flushQueued = false;
		const items = this.#queue;
		if (items.length === 0) return;
		this.#queue = [];
		this.#post(this.#shared, items);
	}

	/** Gives each idle heavy worker the next frame of the run, not in work, that had one taken longest ago. */
	#dispatchHeavy(): void {
		for (const slot of this.#heavy) {
			if (slot.run !== null) continue;
			let next: string | null = null;
			let nextServed = Infinity;
			for (const runId of this.#heavyQueues.keys()) {
				const served = this.#lastServed.get(runId) ?? -1;
				if (served < nextServed && !this.#heavy.some((s) => s.run === runId)) {
					next = runId;
					nextServed = served;
				}
			}
			if (next === null) return;
			const q = this.#heavyQueues.get(next) ?? [];
			const item = q.shift();
			if (q.length === 0) this.#heavyQueues.delete(next);
			if (!item) continue;
			slot.run = next;
			this.#lastServed.set(next, this.#turn++);
			this.#post(slot, [item]);
		}
		// forget the turns of runs with nothing waiting or in work
		if (this.#lastServed.size > 4 * (this.#heavyQueues.size + this.#heavy.length)) {
			for (const runId of this.#lastServed.keys()) {
				if (!this.#heavyQueues.has(runId) && !this.#heavy.some((s) => s.run === runId))
					this.#lastServed.delete(runId);
			}
		}
	}

	#post(slot: Slot, items: Waiting[]): void {
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
		const worker = this.#ensureWorker(slot);
		this.#inFlight.set(batch.id, { slot, worker, items });
		// the worker keeps the process alive only while it has work: an idle pool never holds up an exit
		worker.ref();
		worker.postMessage(batch, [data.buffer]);
	}

	#ensureWorker(slot: Slot): Worker {
		if (slot.worker) return slot.worker;
		const worker = startWorker(this.#entry, { lowPriority: slot !== this.#shared });
		let answered = false;
		worker.on('message', (msg: RowBatchResult | { id: number; error: string }) => {
			answered = true;
			this.#bootFailures = 0;
			this.#done(msg);
		});
		let failed = false;
		const fail = (error: Error) => {
			if (slot.worker === worker) slot.worker = null;
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
				if (batch.slot !== this.#shared) batch.slot.run = null;
			}
			if (this.#stopped.has(worker)) return;
			if (this.usable) this.#dispatchHeavy();
			else this.#rejectHeavy(error);
		};
		worker.on('error', fail);
		worker.on('exit', (code) => fail(new Error(`row worker exited with code ${code}`)));
		// after the listeners: adding a 'message' listener refs the worker again
		worker.unref();
		slot.worker = worker;
		return worker;
	}

	#done(msg: RowBatchResult | { id: number; error: string }): void {
		const batch = this.#inFlight.get(msg.id);
		if (!batch) return;
		this.#inFlight.delete(msg.id);
		if (![...this.#inFlight.values()].some((b) => b.worker === batch.worker)) batch.worker.unref();
		const items = batch.items;
		if (batch.slot !== this.#shared) batch.slot.run = null;
		if ('error' in msg) {
			for (const w of items) w.reject(new Error(`row worker: ${msg.error}`));
		} else {
			const tuples = new Uint8Array(msg.tuples);
			let start = 0;
			let o = 0;
			items.forEach((w, i) => {
				const { metrics, cardinalitySd } = unpackMetrics(msg.metrics, o, w.ctx.settings.zones);
				o += FIXED + w.ctx.settings.zones.length;
				w.resolve({ tuple: tuples.subarray(start, msg.ends[i]), metrics, cardinalitySd });
				start = msg.ends[i];
				if (batch.slot === this.#shared) this.#measured(w.runId, msg.ms[i]);
			});
		}
		this.#dispatchHeavy();
	}

	#measured(runId: string, ms: number): void {
		if (ms <= HEAVY_MEASURED_MS) {
			this.#slowOnce.delete(runId);
		} else if (this.#slowOnce.has(runId)) {
			this.#slowOnce.delete(runId);
			if (!this.#heavyRuns.has(runId))
				logger.warn(
					{ runId, ms },
					'frames of this run take long; computing them in the heavy lane'
				);
			this.#heavyRuns.set(runId, Date.now() + HEAVY_RUN_MS);
		} else this.#slowOnce.add(runId);
	}

	#rejectHeavy(error: Error): void {
		const waiting = [...this.#heavyQueues.values()].flat();
		this.#heavyQueues.clear();
		for (const w of waiting) w.reject(error);
	}

	/** Stops the workers; frames waiting for them fail. */
	async close(): Promise<void> {
		this.#rejectHeavy(new Error('row pool closed'));
		const workers: Worker[] = [];
		for (const slot of [this.#shared, ...this.#heavy]) {
			if (slot.worker) workers.push(slot.worker);
			slot.worker = null;
		}
		for (const worker of workers) this.#stopped.add(worker);
		await Promise.all(workers.map((worker) => worker.terminate()));
	}
}
