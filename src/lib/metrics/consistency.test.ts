import { describe, expect, it } from 'vitest';
import { nees, neesBounds, neesVerdict, subBlock } from './consistency';
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
