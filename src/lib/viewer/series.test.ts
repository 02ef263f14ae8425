import { describe, expect, it } from 'vitest';
import { bucketsFor, downsample, needsRefinement } from './series';

describe('downsample', () => {
	it('groups into equal buckets with min, max, mean and counts; the last bucket is closed', () => {
		const t = [0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10];
		const v = [1, 3, 2, 8, null, 4, 0, 0, 1, 1, 5];
		const b = downsample(t, v, 0, 10, 5);
		expect(b.t).toEqual([0, 2, 4, 6, 8]);
		expect(b.frames).toEqual([2, 2, 2, 2, 3]);
		expect(b.min).toEqual([1, 2, 4, 0, 1]);
		expect(b.max).toEqual([3, 8, 4, 0, 5]);
		expect(b.mean).toEqual([2, 5, 4, 0, 7 / 3]);
	});

	it('leaves out empty buckets and keeps a bucket of only nulls as null', () => {
		const b = downsample([0, 0.5, 9], [null, null, 2], 0, 10, 10);
		expect(b.t).toEqual([0, 9]);
		expect(b.mean).toEqual([null, 2]);
	});

	it('keeps only the window asked for (zooming in refines)', () => {
		const t = Array.from({ length: 1000 }, (_, i) => i * 0.05);
		const v = t.map((x) => Math.sin(x));
		const all = downsample(t, v, 0, 50, 10);
		const zoom = downsample(t, v, 10, 20, 10);
		expect(all.t).toHaveLength(10);
		expect(zoom.t[0]).toBe(10);
		expect(zoom.frames.reduce((a, b) => a + b, 0)).toBe(201);
		for (let i = 0; i < 10; i++) expect(zoom.max[i]!).toBeGreaterThanOrEqual(zoom.mean[i]!);
	});

	it('sizes buckets to the strip and decides when to refine', () => {
		expect(bucketsFor(800, 72_000)).toBe(400);
		expect(bucketsFor(800, 50)).toBe(50);
		expect(needsRefinement(3600 / 400, 0, 60, 800)).toBe(true);
		expect(needsRefinement(0.1, 0, 60, 800)).toBe(false);
	});
});
