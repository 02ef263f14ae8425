import { describe, expect, it } from 'vitest';
import type { Frame } from '$lib/protocol/types';
import { atOrBefore, FrameCache, type FetchProbe, type FetchWindow } from './frame-cache';

const T0 = 1_800_000_000;
const HZ = 10;

/** A 60 s run at 10 Hz whose fetches resolve only when the test says so. */
function setup(maxWindows = 4) {
	const pending: { from: number; to: number; resolve: () => void; signal: AbortSignal }[] = [];
	const fetchWindow: FetchWindow = (from, to, signal) =>
		new Promise<Frame[]>((resolve) => {
			const frames: Frame[] = [];
			for (
				let k = Math.max(0, Math.ceil((from - T0) * HZ - 1e-9));
				k / HZ + T0 <= to + 1e-9 && k < 600;
				k++
			)
				frames.push({ seq: k, t: T0 + k / HZ, estimates: [] });
			pending.push({ from, to, signal, resolve: () => resolve(frames) });
		});
	let changes = 0;
	const cache = new FrameCache({
		firstT: T0,
		duration: 59.9,
		windowS: 5,
		maxWindows,
		fetchWindow,
		onChange: () => changes++
	});
	const flush = async () => {
		for (const p of pending.splice(0)) p.resolve();
		await new Promise((r) => setTimeout(r, 0));
	};
	return { cache, pending, flush, changes: () => changes };
}

describe('FrameCache', () => {
	it('finds the frame at or before a time', () => {
		expect(atOrBefore([0, 0.1, 0.2], 0.15)).toBe(1);
		expect(atOrBefore([0, 0.1, 0.2], -1)).toBe(-1);
		expect(atOrBefore([0, 0.1, 0.2], 0.2)).toBe(2);
	});

	it('loads the window at the playhead first, then one ahead in the play direction', async () => {
		const { cache, pending, flush } = setup();
		cache.want(12.3, 1);
		expect(pending.map((p) => Math.round(p.from - T0))).toEqual([10, 15]);
		expect(cache.lookup(12.3)).toBeNull(); // nothing on hand yet: the scene keeps what it drew
		await flush();
		expect(cache.lookup(12.3)).toMatchObject({ exact: true });
		expect(cache.lookup(12.3)!.t).toBeCloseTo(12.3, 6);
		expect(cache.lookup(12.3)!.frame.seq).toBe(123);
		cache.want(12.3, -1);
		expect(pending.map((p) => Math.round(p.from - T0))).toEqual([5]);
	});

	it('grows with a live run: the window that reached past the old end is fetched again, whole', async () => {
		// frames stored so far: 12 s of the run when the page loaded, more as the rig streams
		let storedS = 12;
		const asked: number[] = [];
		const cache = new FrameCache({
			firstT: T0,
			duration: 12,
			windowS: 5,
			maxWindows: 4,
			fetchWindow: async (from, to) => {
				asked.push(Math.round(from - T0));
				const frames: Frame[] = [];
				for (let k = Math.max(0, Math.ceil((from - T0) * HZ - 1e-9)); k / HZ + T0 <= to + 1e-9; k++)
					if (k / HZ <= storedS + 1e-9) frames.push({ seq: k, t: T0 + k / HZ, estimates: [] });
				return frames;
			}
		});
		const settle = () => new Promise((r) => setTimeout(r, 0));
		cache.want(11, 1, 0, 0);
		await settle();
		expect(asked).toEqual([10]);
		expect(cache.lookup(14)!.frame.seq).toBe(120); // the last frame on hand
		storedS = 30;
		cache.extend(30);
		cache.want(14, 1, 0, 0);
		await settle();
		// window 10–15 s is fetched again: it was cut at the old end when first fetched
		expect(asked).toEqual([10, 10]);
		expect(cache.lookup(14)!.frame.seq).toBe(140);
		cache.extend(20); // never shrinks
		cache.want(14, 1, 0, 0);
		await settle();
		expect(asked).toEqual([10, 10]);
	});

	it('keeps frames of a window to its own half-open span', async () => {
		const { cache, flush } = setup();
		cache.want(4.9, 1);
		await flush();
		expect(cache.range(0, 10).map((f) => f.seq)).toEqual(Array.from({ length: 100 }, (_, i) => i));
	});

	it('answers with the nearest frame on hand while the wanted window is loading', async () => {
		const { cache, flush } = setup();
		cache.want(2, 1);
		await flush();
		cache.want(40, 1);
		const near = cache.lookup(40);
		expect(near).toMatchObject({ exact: false });
		expect(near!.frame.seq).toBe(99); // the last frame of 5–10 s, nearest to 40 s
		expect(cache.isLoading()).toBe(true);
		await flush();
		expect(cache.lookup(40)).toMatchObject({ exact: true });
		expect(cache.lookup(40)!.frame.seq).toBe(400);
	});

	it('evicts the least recently used windows beyond the bound and aborts their fetches', async () => {
		const { cache, pending, flush } = setup(3);
		cache.want(1, 1); // 0, 1
		await flush();
		cache.want(21, 1); // 4, 5 → 0 goes
		const inflight = [...pending];
		expect(cache.windowCount).toBe(3);
		cache.want(41, 1); // 8, 9 → 1 and the in-flight 5 go
		expect(cache.windowCount).toBe(3);
		expect(inflight.find((p) => Math.round(p.from - T0) === 25)!.signal.aborted).toBe(true);
		await flush();
		expect(cache.lookup(1)!.exact).toBe(false);
		expect(cache.frameCount).toBeLessThanOrEqual(3 * 50);
	});

	it('covers the trail span behind the playhead', async () => {
		const { cache, pending } = setup(8);
		cache.want(21, 1, 10, 1);
		expect(pending.map((p) => Math.round(p.from - T0)).sort((a, b) => a - b)).toEqual([
			10, 15, 20, 25
		]);
	});

	it('steps frame by frame across window edges and stops where frames are not loaded', async () => {
		const { cache, flush } = setup();
		cache.want(4.9, 1);
		await flush();
		expect(cache.stepFrom(4.9, 1)).toBeCloseTo(5);
		expect(cache.stepFrom(5, -1)).toBeCloseTo(4.9);
		expect(cache.stepFrom(9.9, 1)).toBeNull();
	});

	it('refetches a failed window when it is wanted again after a pause', async () => {
		let calls = 0;
		let now = 0;
		const cache = new FrameCache({
			now: () => now,
			retryMs: 1000,
			firstT: T0,
			duration: 10,
			windowS: 5,
			maxWindows: 4,
			fetchWindow: () =>
				++calls === 1 ? Promise.reject(new Error('offline')) : Promise.resolve([{ seq: 0, t: T0 }])
		});
		cache.want(0, 1, 0, 0);
		await new Promise((r) => setTimeout(r, 0));
		expect(cache.lookup(0)).toBeNull();
		cache.want(0, 1, 0, 0); // too soon: no tight retry loop
		expect(calls).toBe(1);
		now = 1500;
		cache.want(0, 1, 0, 0);
		await new Promise((r) => setTimeout(r, 0));
		expect(cache.lookup(0)!.frame.seq).toBe(0);
	});

	it('draws the probed frame at the playhead before its window arrives, and drops stale probes and windows', async () => {
		const probes: { at: number; signal: AbortSignal; resolve: (f: Frame[]) => void }[] = [];
		const windows: { from: number; signal: AbortSignal }[] = [];
		const fetchProbe: FetchProbe = (at, signal) =>
			new Promise((resolve) => probes.push({ at, signal, resolve }));
		const fetchWindow: FetchWindow = (from, _to, signal) =>
			new Promise(() => windows.push({ from, signal }));
		let changes = 0;
		const cache = new FrameCache({
			firstT: T0,
			duration: 59.9,
			windowS: 5,
			maxWindows: 8,
			fetchWindow,
			fetchProbe,
			onChange: () => changes++
		});
		cache.want(30.05, 1, 5);
		expect(probes).toHaveLength(1);
		expect(windows).toHaveLength(0); // the windows wait for the probe
		cache.want(30.05, 1, 5); // the same wish twice asks nothing new
		expect(probes).toHaveLength(1);
		cache.want(50.05, 1, 5);
		expect(probes[0].signal.aborted).toBe(true);
		probes[0].resolve([{ seq: 300, t: T0 + 30 }]); // late answer to the stale probe: ignored
		probes[1].resolve([
			{ seq: 499, t: T0 + 49.9 },
			{ seq: 500, t: T0 + 50 }
		]);
		await new Promise((r) => setTimeout(r, 0));
		expect(changes).toBe(1);
		expect(cache.lookup(50.05)).toMatchObject({ exact: true, frame: { seq: 500 } });
		expect(cache.lookup(50.05)!.t).toBeCloseTo(50, 6);
		expect(cache.lookup(51)).toBeNull(); // the probe answers for its own time only
		cache.want(50.05, 1, 5); // the player asks again when the probe is in: now the windows load
		expect(windows.map((w) => Math.round(w.from - T0))).toEqual([50, 55, 45]);
		cache.want(20.05, 1, 5);
		expect(windows.filter((w) => w.signal.aborted).map((w) => Math.round(w.from - T0))).toEqual([
			50, 55, 45
		]);
	});
});
