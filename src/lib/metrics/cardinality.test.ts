import { describe, expect, it } from 'vitest';
import {
	cardinalityDistribution,
	cardinalityError,
	cardinalityStats,
	expectedCardinality
} from './cardinality';
import { seededRandom } from '../random';

/** P(N = k) by enumerating all 2ⁿ existence patterns (definition of the Poisson-binomial law). */
function bruteForce(r: number[]): number[] {
	const out = new Array<number>(r.length + 1).fill(0);
	for (let mask = 0; mask < 1 << r.length; mask++) {
		let prob = 1;
		let k = 0;
		for (let i = 0; i < r.length; i++) {
			if (mask & (1 << i)) {
				prob *= r[i];
				k++;
			} else prob *= 1 - r[i];
		}
		out[k] += prob;
	}
	return out;
}

describe('cardinality', () => {
	it('treats a missing r as 1', () => {
		expect(expectedCardinality([{}, { r: 0.5 }, { r: 0.25 }])).toBe(1.75);
		expect(Array.from(cardinalityDistribution([]))).toEqual([1]);
		expect(Array.from(cardinalityStats([{}, {}]).distribution)).toEqual([0, 0, 1]);
	});

	it('matches brute-force enumeration of the Poisson-binomial law', () => {
		const rand = seededRandom(31);
		for (let trial = 0; trial < 100; trial++) {
			const n = Math.floor(rand() * 13);
			const r = Array.from({ length: n }, () => (trial % 4 === 0 ? Math.round(rand()) : rand()));
			const dp = cardinalityDistribution(r);
			const brute = bruteForce(r);
			for (let k = 0; k <= n; k++) expect(dp[k]).toBeCloseTo(brute[k], 14);
			const stats = cardinalityStats(r.map((x) => ({ r: x })));
			const mean = brute.reduce((s, p, k) => s + k * p, 0);
			const second = brute.reduce((s, p, k) => s + k * k * p, 0);
			expect(stats.mean).toBeCloseTo(mean, 12);
			expect(stats.variance).toBeCloseTo(second - mean * mean, 12);
		}
	});

	it('stays a probability distribution for 300 estimates', () => {
		const rand = seededRandom(32);
		const r = Array.from({ length: 300 }, () => rand());
		const p = cardinalityDistribution(r);
		expect(p.reduce((s, x) => s + x, 0)).toBeCloseTo(1, 12);
		expect(Math.min(...p)).toBeGreaterThanOrEqual(0);
	});

	it('reports the cardinality error against truth', () => {
		// Worked by hand: r = (0.5, 0.5): P(N = 0, 1, 2) = 1/4, 1/2, 1/4; truth has 1 object.
		const e = cardinalityError([{ r: 0.5 }, { r: 0.5 }], 1);
		expect(e).toEqual({ expected: 0, count: 1, probabilityOfTruth: 0.5 });
		expect(cardinalityError([], 3)).toEqual({ expected: -3, count: -3, probabilityOfTruth: 0 });
		expect(() => expectedCardinality([{ r: 1.5 }])).toThrow(RangeError);
	});
});
