import { describe, expect, it } from 'vitest';
import stdlibChiSquareQuantile from '@stdlib/stats-base-dists-chisquare-quantile';
import {
	chiSquareCdf,
	chiSquareQuantile,
	erfc,
	gammaP,
	gammaQ,
	logGamma,
	normalCdf,
	normalQuantile
} from './special';

describe('special functions', () => {
	it('logGamma matches exact values', () => {
		expect(logGamma(1)).toBeCloseTo(0, 14);
		expect(logGamma(5)).toBeCloseTo(Math.log(24), 13); // Γ(5) = 4!
		expect(logGamma(0.5)).toBeCloseTo(Math.log(Math.sqrt(Math.PI)), 13); // Γ(1/2) = √π
		expect(logGamma(0.1)).toBeCloseTo(
			Math.log(Math.PI / Math.sin(0.1 * Math.PI)) - logGamma(0.9),
			13
		);
		// Stirling with its 1/(12x) term is accurate to ~1e-15 relative at x = 1e6.
		const x = 1e6;
		const stirling = (x - 0.5) * Math.log(x) - x + 0.5 * Math.log(2 * Math.PI) + 1 / (12 * x);
		expect(logGamma(x) / stirling).toBeCloseTo(1, 13);
	});

	it('incomplete gamma agrees with closed forms', () => {
		// P(1, x) = 1 − e^(−x); Q(n, x) for integer n is a Poisson sum (exact identities).
		for (const x of [0.01, 0.5, 1, 3, 10, 40]) {
			expect(gammaP(1, x)).toBeCloseTo(1 - Math.exp(-x), 14);
			const poisson = Math.exp(-x) * (1 + x + (x * x) / 2);
			expect(gammaQ(3, x)).toBeCloseTo(poisson, 14);
		}
	});

	it('erfc and Φ match table values', () => {
		expect(erfc(1)).toBeCloseTo(0.15729920705028513, 14); // erfc(1), from memory
		expect(erfc(0)).toBe(1);
		expect(erfc(-1)).toBeCloseTo(2 - 0.15729920705028513, 14);
		expect(normalCdf(1.96)).toBeCloseTo(0.9750021048517795, 13); // Φ(1.96), from memory
		expect(normalCdf(-1)).toBeCloseTo(0.15865525393145707, 13); // Φ(−1), from memory
		expect(normalCdf(-8)).toBeCloseTo(6.22096057427178e-16, 25); // Φ(−8), from memory
	});

	it('normal quantile inverts Φ', () => {
		expect(normalQuantile(0.975)).toBeCloseTo(1.959963984540054, 12); // z_0.975, from memory
		expect(normalQuantile(0.5)).toBeCloseTo(0, 14);
		for (const q of [1e-12, 1e-6, 0.01, 0.3, 0.7, 0.99, 1 - 1e-9]) {
			const x = normalQuantile(q);
			const back = q < 0.5 ? normalCdf(x) : 1 - normalCdf(-x);
			expect(Math.abs(back - q) / Math.min(q, 1 - q)).toBeLessThan(1e-9);
		}
	});
});

describe('chiSquareQuantile', () => {
	it('matches handbook table values (values from memory, 3–4 significant digits as printed)', () => {
		const table: [number, number, number][] = [
			// [q, dof, tabulated quantile]
			[0.95, 1, 3.841],
			[0.99, 1, 6.635],
			[0.95, 2, 5.991],
			[0.975, 2, 7.378],
			[0.025, 2, 0.0506],
			[0.95, 5, 11.07],
			[0.025, 10, 3.247],
			[0.975, 10, 20.483],
			[0.95, 20, 31.41],
			[0.025, 30, 16.791],
			[0.975, 30, 46.979],
			[0.025, 100, 74.222],
			[0.975, 100, 129.561]
		];
		for (const [q, k, value] of table) {
			const decimals = String(value).split('.')[1].length;
			expect(chiSquareQuantile(q, k)).toBeCloseTo(value, decimals);
		}
	});

	it('reproduces the NEES interval for N = 50 runs, n = 2 (Bar-Shalom, Li, Kirubarajan 2001, ch. 5: [1.5, 2.6], from memory)', () => {
		expect(chiSquareQuantile(0.025, 100) / 50).toBeCloseTo(1.48, 2);
		expect(chiSquareQuantile(0.975, 100) / 50).toBeCloseTo(2.59, 2);
	});

	it('agrees with @stdlib/stats-base-dists-chisquare-quantile up to 1000 dof', () => {
		for (const k of [0.5, 1, 2, 3, 7.5, 10, 50, 200, 1000]) {
			for (const q of [1e-10, 0.001, 0.025, 0.1, 0.5, 0.9, 0.975, 0.999, 1 - 1e-10]) {
				const ours = chiSquareQuantile(q, k);
				const ref = stdlibChiSquareQuantile(q, k);
				expect(Math.abs(ours - ref) / ref).toBeLessThan(1e-9);
			}
		}
	});

	it('follows Wilson–Hilferty for very many dof (run-averaged NEES over long runs)', () => {
		// @stdlib 0.2.x drifts here (its median for 1e4 dof is 10001.3, where k − 2/3 = 9999.33 is
		// the known asymptote), so large dof are checked against Wilson–Hilferty, whose error
		// shrinks as k grows (E. B. Wilson, M. M. Hilferty, PNAS 1931).
		for (const k of [1e4, 1e5, 1e6, 3e6]) {
			for (const q of [0.001, 0.025, 0.5, 0.975, 0.999]) {
				const z = normalQuantile(q);
				const h = 2 / (9 * k);
				const wh = k * Math.pow(1 - h + z * Math.sqrt(h), 3);
				expect(Math.abs(chiSquareQuantile(q, k) - wh) / wh).toBeLessThan(1e-6);
			}
		}
	});

	it('is the inverse of the CDF', () => {
		for (const k of [1, 4, 33]) {
			for (const q of [0.01, 0.5, 0.99])
				expect(chiSquareCdf(chiSquareQuantile(q, k), k)).toBeCloseTo(q, 12);
		}
		expect(chiSquareQuantile(0, 3)).toBe(0);
		expect(chiSquareQuantile(1, 3)).toBe(Infinity);
		expect(() => chiSquareQuantile(0.5, 0)).toThrow(RangeError);
	});
});
