/**
 * Rows computed in the worker thread must be byte for byte the rows computed inline, and a failing worker
 * must fail the frames waiting for it, not lose them silently or hang.
 */
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
});
