/**
 * Rows computed in the worker thread must be byte for byte the rows computed inline, and a failing worker
 * must fail the frames waiting for it, not lose them silently or hang.
 */
import { existsSync, readdirSync, readFileSync } from 'node:fs';
import { Packr } from 'msgpackr';
import { afterAll, describe, expect, it } from 'vitest';
import { defaultMetricSettings, type MetricSettings } from '$lib/metrics';
import { seededRandom } from '$lib/random';
import { fromMsgpack } from '$lib/protocol/codec';
import type { Frame } from '$lib/protocol/types';
import { frameTuple, uuidBytes } from './copy-binary';
import { frameRow, type RowContext } from './frame-rows';
import { RowPool, type PreparedRow } from './row-pool';

const runId = '0b6f3a52-8a11-4c3e-9a55-4d2f1f0c7e01';
const packr = new Packr({ useRecords: false });
const dims = { stateDim: 4, measDim: 2 };

function frame(seq: number, rnd: () => number): Record<string, unknown> {
	const est = Array.from({ length: Math.floor(rnd() * 8) }, (_, i) => ({
		id: i,
		x: [rnd() * 40 - 20, rnd() * 10 - 5, rnd(), rnd()],
		P: [1, 0.1, 0, 0, 0.1, 1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1],
		r: rnd()
	}));
	const f: Record<string, unknown> = {
		type: 'frame',
		seq,
		t: 1_790_000_000 + seq * 0.05,
		estimates: est,
		truth: est.map((e) => ({ x: e.x.map((v) => v + rnd() - 0.5) }))
	};
	if (rnd() < 0.8) f.ego = { x: rnd() * 5, y: rnd() * 5, heading: rnd() };
	if (rnd() < 0.5) f.measurements = [{ z: [1, 2] }];
	return f;
}

/** Queues every frame in one tick (one worker batch), `ctxOf(i)` the context of frame i. */
function prepareAll(
	pool: RowPool,
	frames: Record<string, unknown>[],
	ctxOf: (i: number) => RowContext
) {
	return Promise.all(
		frames.map((f, i) =>
			pool.prepare(runId, ctxOf(i), dims, {
				seq: f.seq as number,
				t: f.t as number,
				raw: packr.pack(f)
			})
		)
	);
}

/** Each prepared row is the row computed inline with its frame's context. */
function expectInlineRows(
	prepared: PreparedRow[],
	frames: Record<string, unknown>[],
	ctxOf: (i: number) => RowContext
) {
	frames.forEach((f, i) => {
		const raw = packr.pack(f);
		const decoded = fromMsgpack(raw) as Frame;
		const row = frameRow(runId, { seq: decoded.seq, t: decoded.t, raw, frame: decoded }, ctxOf(i));
		expect(Buffer.from(prepared[i].tuple)).toEqual(frameTuple(uuidBytes(runId), row));
		expect(prepared[i].metrics.gospa).toBe(row.gospa);
		expect(prepared[i].metrics.zones).toEqual(row.zones ?? {});
		expect(prepared[i].cardinalitySd).toBe(row.cardinality_sd);
	});
}

const pools: RowPool[] = [];
afterAll(async () => {
	for (const p of pools) await p.close();
});

describe('RowPool', () => {
	it('computes the same tuples and metrics as the inline path, for every zone setting', async () => {
		const pool = new RowPool();
		pools.push(pool);
		const rnd = seededRandom(9);
		const settings: MetricSettings[] = [
			defaultMetricSettings,
			{ ...defaultMetricSettings, c: 2, p: 1, zones: [] }
		];
		for (const s of settings) {
			for (const coords of ['world', 'ego'] as const) {
				const ctx: RowContext = { stateFields: ['x', 'y', 'vx', 'vy'], settings: s, coords };
				const frames = Array.from({ length: 50 }, (_, i) => frame(i, rnd));
				const prepared = await prepareAll(pool, frames, () => ctx);
				expectInlineRows(prepared, frames, () => ctx);
			}
		}
	});

	it("computes each frame with its own settings when a run's frames before and after a save share a worker batch", async () => {
		const pool = new RowPool();
		pools.push(pool);
		const rnd = seededRandom(11);
		const before: RowContext = {
			stateFields: ['x', 'y', 'vx', 'vy'],
			settings: { ...defaultMetricSettings, zones: [] },
			coords: 'world'
		};
		// the settings a save put in place: another cut-off and one zone more
		const after: RowContext = { ...before, settings: { ...defaultMetricSettings, c: 2 } };
		const frames = Array.from({ length: 6 }, (_, i) => frame(i, rnd));
		const ctxOf = (i: number) => (i % 2 === 0 ? before : after);
		// queued in one tick, so they go to the worker in one batch
		const prepared = await prepareAll(pool, frames, ctxOf);
		expectInlineRows(prepared, frames, ctxOf);
	});

	it('decodes a frame the fast reader declines (a set over the default limit) instead of failing', async () => {
		const pool = new RowPool();
		pools.push(pool);
		const big = {
			type: 'frame',
			seq: 0,
			t: 1,
			truth: Array.from({ length: 5001 }, (_, i) => ({ x: [i, 0, 0, 0] }))
		};
		const ctx: RowContext = {
			stateFields: ['x', 'y', 'vx', 'vy'],
			settings: defaultMetricSettings,
			coords: 'world'
		};
		const p = await pool.prepare(runId, ctx, dims, { seq: 0, t: 1, raw: packr.pack(big) });
		expect(p.metrics.n_truth).toBe(5001);
	});

	it('with the metric columns switched off, keeps set sizes and leaves the metrics null', async () => {
		const pool = new RowPool();
		pools.push(pool);
		const ctx: RowContext = {
			stateFields: ['x', 'y', 'vx', 'vy'],
			settings: defaultMetricSettings,
			coords: 'world',
			metrics: false
		};
		const f = { type: 'frame', seq: 0, t: 1, estimates: [{ x: [1, 2, 3, 4] }], truth: [] };
		const p = await pool.prepare(runId, ctx, dims, { seq: 0, t: 1, raw: packr.pack(f) });
		expect(p.metrics).toMatchObject({ n_estimates: 1, n_truth: 0, n_measurements: null });
		expect(p.metrics.gospa).toBeNull();
		expect(p.metrics.expected_cardinality).toBeNull();
	});

	it('stands aside after workers fail to start three times in a row, so the store computes rows inline', async () => {
		const pool = new RowPool(new URL('./no-such-worker.ts', import.meta.url));
		pools.push(pool);
		const ctx: RowContext = {
			stateFields: ['x', 'y', 'vx', 'vy'],
			settings: defaultMetricSettings,
			coords: 'world'
		};
		const raw = packr.pack(frame(0, seededRandom(1)));
		for (let i = 0; i < 3; i++) {
			expect(pool.usable).toBe(true);
			await expect(pool.prepare(runId, ctx, dims, { seq: i, t: 1, raw })).rejects.toThrow();
		}
		expect(pool.usable).toBe(false);
	});

	it('fails the frames of a batch the worker could not compute, with its reason', async () => {
		const pool = new RowPool();
		pools.push(pool);
		const ctx: RowContext = {
			stateFields: ['x', 'y', 'vx', 'vy'],
			settings: { ...defaultMetricSettings, c: -1 }, // settings validation never lets this through
			coords: 'world'
		};
		const raw = packr.pack(frame(0, seededRandom(1)));
		await expect(pool.prepare(runId, ctx, dims, { seq: 0, t: 1, raw })).rejects.toThrow(
			/row worker: cut-off c must be finite and > 0/
		);
	});

	it('fails the frames waiting for a worker that dies, and starts a new worker for the next ones', async () => {
		const pool = new RowPool();
		pools.push(pool);
		const ctx: RowContext = {
			stateFields: ['x', 'y', 'vx', 'vy'],
			settings: defaultMetricSettings,
			coords: 'world'
		};
		const rnd = seededRandom(1);
		// a batch that keeps the worker busy for a good while (100 × 100 objects per frame)
		const heavy = (seq: number) => {
			const est = Array.from({ length: 100 }, () => ({
				x: [rnd() * 99, rnd() * 99, 0, 0],
				r: 0.5
			}));
			return packr.pack({ type: 'frame', seq, t: 1, estimates: est, truth: est });
		};
		await pool.prepare(runId, ctx, dims, { seq: 0, t: 1, raw: heavy(0) }); // the worker is up
		const waiting = Array.from({ length: 400 }, (_, i) =>
			pool.prepare(runId, ctx, dims, { seq: i + 1, t: 1, raw: heavy(i + 1) })
		);
		await new Promise((r) => setImmediate(r)); // the batch is posted
		await pool.close();
		const outcomes = await Promise.allSettled(waiting);
		expect(outcomes.every((o) => o.status === 'rejected')).toBe(true);
		expect(String((outcomes[0] as PromiseRejectedResult).reason)).toMatch(/row worker exited/);
		const again = await pool.prepare(runId, ctx, dims, { seq: 999, t: 1, raw: heavy(999) });
		expect(again.metrics.n_truth).toBe(100);
	});

	describe(
		'lanes: a run with expensive frames never holds up another run',
		{ timeout: 60_000 },
		() => {
			const ctx: RowContext = {
				stateFields: ['x', 'y', 'vx', 'vy'],
				settings: defaultMetricSettings,
				coords: 'world'
			};
			const rnd = seededRandom(77);
			/** k truth objects and k estimates all within the cut-off of each other: one k × k GOSPA group */
			const dense = (seq: number, k: number) => {
				const truth = Array.from({ length: k }, () => ({ x: [rnd() * 5, rnd() * 5, 0, 0] }));
				const estimates = truth.map((o) => ({ x: [o.x[0] + rnd(), o.x[1] + rnd(), 0, 0] }));
				const frame = { type: 'frame', seq, t: 1 + seq, truth, estimates };
				return { seq, t: 1 + seq, raw: packr.pack(frame), frame };
			};
			const light = (seq: number) => {
				const f = frame(seq, rnd);
				return {
					seq,
					t: f.t as number,
					raw: packr.pack(f),
					frame: fromMsgpack(packr.pack(f)) as Frame
				};
			};
			const otherRun = '0b6f3a52-8a11-4c3e-9a55-4d2f1f0c7e02';
			const thirdRun = '0b6f3a52-8a11-4c3e-9a55-4d2f1f0c7e03';

			/** Starts both lanes' workers, so that booting them is not what the order below measures. */
			async function warm(pool: RowPool) {
				await Promise.all([
					pool.prepare(runId, ctx, dims, dense(0, 60)),
					pool.prepare(otherRun, ctx, dims, light(0))
				]);
			}

			/**
			 * One heavy frame of one run, and beside it an ordinary rig of another run: one frame at a time, the
			 * next sent once the last is computed. Returns how many ordinary frames were done before the heavy one.
			 */
			async function ordinaryBeside(pool: RowPool, heavyFrame: ReturnType<typeof dense>) {
				const log: string[] = [];
				const heavy = pool.prepare(runId, ctx, dims, heavyFrame).then(() => log.push('heavy'));
				for (let i = 1; i <= 30; i++) {
					await pool.prepare(otherRun, ctx, dims, light(i));
					log.push(`light ${i}`);
				}
				await heavy;
				return log.indexOf('heavy');
			}

			it('computes an ordinary run’s frames while a heavy frame of another run is in work', async () => {
				const pool = new RowPool(undefined, { heavyWorkers: 1 });
				pools.push(pool);
				await warm(pool);
				// 600 × 600 objects in one group: about half a second of one core, far above the estimate bound
				expect(await ordinaryBeside(pool, dense(1, 600))).toBe(30);
			});

			it('sends a run whose frames proved expensive to the heavy lane, even when the estimate missed', async () => {
				// an estimate that never calls a frame heavy: only the measured time can
				const pool = new RowPool(undefined, { heavyWorkers: 1, heavyNs: Infinity });
				pools.push(pool);
				await warm(pool);
				// two frames in a row measured well over 20 ms
				await pool.prepare(runId, ctx, dims, dense(1, 300));
				await pool.prepare(runId, ctx, dims, dense(2, 300));
				expect(await ordinaryBeside(pool, dense(3, 600))).toBe(30);
			});

			it.runIf(existsSync('/proc/thread-self'))(
				'runs the heavy lane’s worker at the lowest CPU priority',
				async () => {
					// field 19 of /proc/<pid>/task/<tid>/stat is the thread's nice value
					const nice = () =>
						readdirSync('/proc/self/task').map((tid) =>
							Number(
								readFileSync(`/proc/self/task/${tid}/stat`, 'utf8').split(') ')[1].split(' ')[16]
							)
						);
					const pool = new RowPool(undefined, { heavyWorkers: 1 });
					pools.push(pool);
					await pool.prepare(otherRun, ctx, dims, light(0)); // the shared worker
					const before = nice().filter((v) => v === 19).length;
					await pool.prepare(runId, ctx, dims, dense(1, 200)); // and the heavy lane's
					expect(nice().filter((v) => v === 19).length).toBe(before + 1);
					expect(nice().filter((v) => v !== 19 && v !== 0)).toEqual([]);
				}
			);

			it('takes heavy runs in turn, one frame each, and matches the inline rows', async () => {
				const pool = new RowPool(undefined, { heavyWorkers: 1 });
				pools.push(pool);
				await warm(pool);
				const log: string[] = [];
				const a = [1, 2, 3].map((seq) => {
					const f = dense(seq, 250);
					return pool.prepare(runId, ctx, dims, f).then((p) => (log.push(`a${seq}`), { f, p }));
				});
				const b = pool.prepare(thirdRun, ctx, dims, dense(1, 250)).then(() => log.push('b1'));
				await Promise.all([...a, b]);
				// a1 was already in work when b1 came; b1 then goes before a2 and a3
				expect(log).toEqual(['a1', 'b1', 'a2', 'a3']);
				for (const { f, p } of await Promise.all(a)) {
					const row = frameRow(runId, { seq: f.seq, t: f.t, raw: f.raw, frame: f.frame }, ctx);
					expect(Buffer.from(p.tuple)).toEqual(frameTuple(uuidBytes(runId), row));
				}
			});
		}
	);
});
