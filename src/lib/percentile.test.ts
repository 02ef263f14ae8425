import { describe, expect, it } from 'vitest';
import { percentile, percentileOfSorted } from './percentile';

describe('nearest-rank percentile', () => {
	// The worked examples of the nearest-rank method in Wikipedia's "Percentile" article (section
	// "The nearest-rank method"); the lists and answers are from memory.
	it('gives the worked examples', () => {
		const five = [15, 20, 35, 40, 50];
		expect([5, 30, 40, 50, 100].map((p) => percentile(five, p))).toEqual([15, 20, 20, 35, 50]);
		const ten = [3, 6, 7, 8, 8, 10, 13, 15, 16, 20];
		expect([25, 50, 75, 100].map((p) => percentile(ten, p))).toEqual([7, 8, 15, 20]);
		const eleven = [3, 6, 7, 8, 8, 9, 10, 13, 15, 16, 20];
		expect([25, 50, 75, 100].map((p) => percentile(eleven, p))).toEqual([7, 9, 15, 20]);
	});

	it('sorts a copy, and ends at the smallest and largest value', () => {
		const xs = [50, 15, 40, 20, 35];
		expect(percentile(xs, 50)).toBe(35);
		expect(xs).toEqual([50, 15, 40, 20, 35]);
		expect(percentile(xs, 0)).toBe(15);
		expect(percentile(xs, 100)).toBe(50);
		expect(percentileOfSorted([7], 99)).toBe(7);
	});

	it('is NaN on no values and refuses a p outside 0..100', () => {
		expect(percentile([], 50)).toBeNaN();
		expect(() => percentile([1], 101)).toThrow(RangeError);
		expect(() => percentile([1], Number.NaN)).toThrow(RangeError);
	});
});
