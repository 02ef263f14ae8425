import { describe, expect, it } from 'vitest';
import { DEFAULT_LIMITS } from '../protocol/limits';
import { validateFrame } from '../protocol/validate';
import { nees, neesBounds, neesVerdict, subBlock } from './consistency';
import { frameMetrics } from './frame';
import { defaultMetricSettings } from './settings';
import { seededNormal } from '../random';

describe('nees', () => {
	it('computes eᵀ P⁻¹ e by hand', () => {
		// Diagonal P = diag(4, 9), e = (2, 3): 4/4 + 9/9 = 2.
		expect(nees([2, 3], [4, 0, 0, 9])).toBeCloseTo(2, 14);
		// P = [[2, 1], [1, 2]], P⁻¹ = [[2, −1], [−1, 2]] / 3; e = (1, 1): (2 − 1 − 1 + 2)/3 = 2/3.
		expect(nees([1, 1], [2, 1, 1, 2])).toBeCloseTo(2 / 3, 14);
	});

	it('rejects covariances that are not symmetric positive definite', () => {
		expect(nees([1, 1], [1, 2, 2, 1])).toBeNull();
		expect(nees([1, 1], [1, 0.5, 0, 1])).toBeNull();
		expect(nees([1], [0])).toBeNull();
		expect(nees([1, 1], [1, 0, 0])).toBeNull();
	});

	it('gives a NEES to a covariance the protocol accepts as symmetric, from its symmetric part', () => {
		// Worked check: e = (0.4, −0.3), P = [[1, 0.3], [0.3000001, 1]] (asymmetry 1e-7 relative, within the
		// protocol's 1e-6). Symmetric part S = [[a, b], [b, a]] with a = 1, b = (0.3 + 0.3000001)/2 = 0.30000005.
		// Closed-form 2×2 inverse: S⁻¹ = [[a, −b], [−b, a]] / (a² − b²), so
		//   NEES = (a·e₁² − 2b·e₁·e₂ + a·e₂²) / (a² − b²) = (0.25 + 0.24·b) / (1 − b²)
		//        = 0.322000012 / 0.9099999699999975 = 0.35384617870 (to 11 digits).
		// (With b = 0.3 exactly the same formula gives 0.322 / 0.91 = 0.3538461538…, the figure the issue
		// quotes; the asymmetry moves NEES by 2.5e-8.)
		const b = (0.3 + 0.3000001) / 2;
		const symmetricPartNees = (0.25 + 0.24 * b) / (1 - b * b);
		expect(symmetricPartNees).toBeCloseTo(0.3538461787, 10);
		expect(nees([0.4, -0.3], [1, 0.3, 0.3000001, 1])).toBeCloseTo(symmetricPartNees, 14);
		expect(nees([0.4, -0.3], [1, 0.3, 0.3, 1])).toBeCloseTo(0.322 / 0.91, 14);
		// and the frame's figures count it: one NEES sample, that value
		const m = frameMetrics(
			{
				estimates: [{ x: [0.4, -0.3], P: [1, 0.3, 0.3000001, 1] }],
				truth: [{ x: [0, 0] }]
			},
			{ stateFields: ['x', 'y'], settings: { ...defaultMetricSettings, zones: [] } }
		);
		expect(m.nees_count).toBe(1);
		expect(m.nees_mean).toBeCloseTo(symmetricPartNees, 14);
	});

	it('uses the tolerance ingest validates with: a NEES exactly where the protocol accepts P', () => {
		const tol = DEFAULT_LIMITS.symmetryTolerance;
		const dims = { stateDim: 2, measDim: 2 };
		// scale = max(|P01|, |P10|, √(P00·P11)) = 1, so the edge is an off-diagonal difference of 1e-6
		for (const [delta, accepted] of [
			[0, true],
			[0.5 * tol, true],
			[0.999 * tol, true],
			[1.001 * tol, false],
			[2 * tol, false]
		] as const) {
			const P = [1, 0.3, 0.3 + delta, 1];
			const frame = { type: 'frame', seq: 0, t: 1, estimates: [{ x: [0.4, -0.3], P }] };
			expect(validateFrame(frame, dims).ok, `delta ${delta}`).toBe(accepted);
			const v = nees([0.4, -0.3], P);
			expect(v !== null, `delta ${delta}`).toBe(accepted);
			if (v !== null) {
				const m = 0.3 + delta / 2;
				expect(v).toBeCloseTo((0.25 + 0.24 * m) / (1 - m * m), 12);
			}
		}
	});

	it('extracts the position block of a full state covariance', () => {
		// State (x, vx, y, vy): the x,y block sits at indices 0 and 2.
		const P = [1, 0.1, 0.2, 0, 0.1, 5, 0, 0, 0.2, 0, 3, 0.3, 0, 0, 0.3, 7];
		expect(Array.from(subBlock(P, 4, [0, 2]))).toEqual([1, 0.2, 0.2, 3]);
	});

	it('averages to the dimension for errors drawn from P (Monte Carlo, fixed seed)', () => {
		// E[NEES] = n for a consistent estimator (Bar-Shalom, Li, Kirubarajan 2001, ch. 5).
		const normal = seededNormal(41);
		const [a, b, c] = [2, 0.7, 0.5]; // P = L Lᵀ with L = [[2, 0], [0.7, 0.5]]
		const P = [a * a, a * b, a * b, b * b + c * c];
		let sum = 0;
		const N = 20000;
		for (let k = 0; k < N; k++) {
			const z1 = normal();
			const z2 = normal();
			sum += nees([a * z1, b * z1 + c * z2], P) ?? NaN;
		}
		// Standard error of the mean is sqrt(2n/N) = 0.014; allow five of them.
		expect(Math.abs(sum / N - 2)).toBeLessThan(0.07);
	});
});

describe('neesBounds and verdict', () => {
	it('gives the textbook interval for N = 50, n = 2 (Bar-Shalom, Li, Kirubarajan 2001, ch. 5: [1.5, 2.6], from memory)', () => {
		const b = neesBounds(50, 2);
		expect(b.lower).toBeCloseTo(74.222 / 50, 4); // χ²_100(0.025) = 74.222, handbook value from memory
		expect(b.upper).toBeCloseTo(129.561 / 50, 4); // χ²_100(0.975) = 129.561, handbook value from memory
		expect(neesVerdict(2.0, 50, 2)).toBe('consistent');
		expect(neesVerdict(3.0, 50, 2)).toBe('overconfident');
		expect(neesVerdict(1.0, 50, 2)).toBe('underconfident');
	});

	it('narrows around n for a long run', () => {
		const b = neesBounds(1_440_000, 2);
		expect(b.lower).toBeLessThan(2);
		expect(b.upper).toBeGreaterThan(2);
		expect(b.upper - b.lower).toBeLessThan(0.01);
		expect(() => neesBounds(0, 2)).toThrow(RangeError);
	});
});
