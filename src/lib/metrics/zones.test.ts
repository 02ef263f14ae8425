import { describe, expect, it } from 'vitest';
import {
	bivariateNormalCdf,
	bivariateNormalUpper,
	gaussianRectProbability,
	gaussLegendreHalf
} from './bivariate-normal';
import { normalCdf } from './special';
import {
	changeCoords,
	insideProbability,
	zoneOccupancy,
	type PlanarObject,
	type Zone
} from './zones';
import { Rng } from '../random';

/** P(X > h, Y > k) = ∫_h^∞ φ(x) Φ((ρx − k)/√(1−ρ²)) dx by composite Simpson on [h, 10] (a separate route). */
function upperByQuadrature(h: number, k: number, rho: number): number {
	const hi = 10;
	const n = 20000;
	const step = (hi - h) / n;
	const s = Math.sqrt(1 - rho * rho);
	const f = (x: number) =>
		(Math.exp((-x * x) / 2) / Math.sqrt(2 * Math.PI)) * normalCdf((rho * x - k) / s);
	let sum = f(h) + f(hi);
	for (let i = 1; i < n; i++) sum += (i % 2 ? 4 : 2) * f(h + i * step);
	return (sum * step) / 3;
}

describe('Gauss–Legendre rules', () => {
	it('integrate polynomials of degree 2n − 1 exactly', () => {
		for (const n of [6, 12, 20]) {
			const { x, w } = gaussLegendreHalf(n);
			expect(2 * w.reduce((s, v) => s + v, 0)).toBeCloseTo(2, 14); // ∫ 1 = 2
			const even = 2 * Array.from(x).reduce((s, xi, i) => s + w[i] * xi ** (2 * n - 2), 0);
			expect(even).toBeCloseTo(2 / (2 * n - 1), 14); // ∫ x^(2n−2) = 2/(2n−1)
		}
		// Abscissa of the 6-point rule, a classical table value (from memory).
		expect(gaussLegendreHalf(6).x[0]).toBeCloseTo(0.9324695142031521, 14);
	});
});

describe('bivariate normal', () => {
	it("matches Sheppard's orthant formula P(X>0, Y>0) = 1/4 + asin(ρ)/(2π)", () => {
		// W. F. Sheppard, Phil. Trans. R. Soc. A 192 (1899).
		for (const rho of [
			-1, -0.999, -0.95, -0.9, -0.5, -0.2, 0, 0.1, 0.29, 0.31, 0.6, 0.8, 0.93, 0.99, 1
		]) {
			expect(bivariateNormalUpper(0, 0, rho)).toBeCloseTo(
				0.25 + Math.asin(rho) / (2 * Math.PI),
				14
			);
		}
	});

	it('reduces to products and single normals in the limiting cases', () => {
		expect(bivariateNormalUpper(0.3, -1.2, 0)).toBeCloseTo(normalCdf(-0.3) * normalCdf(1.2), 15);
		// ρ = 1: X = Y, so P(X > h, Y > k) = Φ(−max(h, k)); ρ = −1: Y = −X.
		expect(bivariateNormalUpper(0.4, -0.3, 1)).toBeCloseTo(normalCdf(-0.4), 15);
		expect(bivariateNormalUpper(-1, -0.5, -1)).toBeCloseTo(normalCdf(0.5) - normalCdf(-1), 15);
		expect(bivariateNormalUpper(-Infinity, 1, 0.5)).toBeCloseTo(normalCdf(-1), 15);
		expect(bivariateNormalCdf(Infinity, Infinity, 0.3)).toBe(1);
	});

	it('agrees with direct one-dimensional quadrature across all three branches', () => {
		for (const rho of [-0.97, -0.8, -0.4, 0.2, 0.5, 0.85, 0.95, 0.999]) {
			for (const [h, k] of [
				[-1.5, 0.3],
				[0.7, 0.2],
				[2, -2],
				[-0.4, -2.5],
				[1.8, 2.2]
			]) {
				expect(bivariateNormalUpper(h, k, rho)).toBeCloseTo(upperByQuadrature(h, k, rho), 9);
			}
		}
	});

	it('agrees with Monte Carlo on rectangles (fixed seed)', () => {
		const rng = new Rng(51);
		const rand = () => rng.next();
		const normal = () => rng.normal();
		const N = 40000;
		for (let trial = 0; trial < 6; trial++) {
			const rho = 2 * rand() - 1;
			const [sx, sy] = [0.5 + 2 * rand(), 0.5 + 2 * rand()];
			const mean: [number, number] = [rand() * 4 - 2, rand() * 4 - 2];
			const rect = { xMin: -1, xMax: 1 + 2 * rand(), yMin: -2 * rand(), yMax: 1.5 };
			let hits = 0;
			for (let s = 0; s < N; s++) {
				const z1 = normal();
				const z2 = rho * z1 + Math.sqrt(1 - rho * rho) * normal();
				const x = mean[0] + sx * z1;
				const y = mean[1] + sy * z2;
				if (x >= rect.xMin && x <= rect.xMax && y >= rect.yMin && y <= rect.yMax) hits++;
			}
			const p = gaussianRectProbability(mean, [sx * sx, rho * sx * sy, sy * sy], rect) ?? NaN;
			const se = Math.sqrt((p * (1 - p)) / N);
			// Five standard errors (common practice for a fixed-seed Monte Carlo check).
			expect(Math.abs(hits / N - p)).toBeLessThan(5 * se + 1e-4);
		}
	});

	it('handles degenerate covariances', () => {
		const rect = { xMin: 0, xMax: 2, yMin: -1, yMax: 1 };
		expect(gaussianRectProbability([1, 0], [0, 0, 0], rect)).toBe(1);
		expect(gaussianRectProbability([1, 0], [0, 0, 1], rect)).toBeCloseTo(
			normalCdf(1) - normalCdf(-1),
			14
		);
		expect(gaussianRectProbability([1, 0], [1, 2, 1], rect)).toBeNull();
	});
});

describe('zones', () => {
	const lane: Zone = { name: 'lane', coords: 'ego', x: [0, 20], y: [-1.75, 1.75] };

	it('treats objects without covariance as points and combines existence', () => {
		const objects: PlanarObject[] = [
			{ mean: [10, 0], r: 0.5 },
			{ mean: [10, 0.5], r: 0.4 },
			{ mean: [25, 0], r: 1 }
		];
		// Worked by hand: 1 − (1 − 0.5)(1 − 0.4)(1 − 0) = 0.7.
		expect(zoneOccupancy(objects, lane)).toBeCloseTo(0.7, 15);
		expect(zoneOccupancy([], lane)).toBe(0);
	});

	it('half covers an object centred on an edge, and uses the Gaussian when given', () => {
		// By symmetry half the mass of an object centred on the lane edge y = 1.75 lies inside,
		// less the tiny part beyond y = −1.75 and outside 0..20 in x.
		const o: PlanarObject = { mean: [10, 1.75], cov: [0.01, 0, 0.04] };
		expect(insideProbability(o, lane)).toBeCloseTo(0.5, 12);
		const wide: PlanarObject = { mean: [10, 0], cov: [1, 0, 1] };
		const expected = (normalCdf(10) - normalCdf(-10)) * (normalCdf(1.75) - normalCdf(-1.75));
		expect(insideProbability(wide, lane)).toBeCloseTo(expected, 12);
	});

	it('rotates the zone about its centre', () => {
		// A 10 × 2 box rotated by 90° becomes 2 × 10 about the same centre (5, 0).
		const box: Zone = { name: 'b', coords: 'ego', x: [0, 10], y: [-1, 1], angle: Math.PI / 2 };
		expect(insideProbability({ mean: [5, 4] }, box)).toBe(1);
		expect(insideProbability({ mean: [8, 0] }, box)).toBe(0);
		const o: PlanarObject = { mean: [5.5, 3], cov: [0.3, 0.1, 2] };
		const swapped: Zone = { name: 's', coords: 'ego', x: [4, 6], y: [-5, 5] };
		expect(insideProbability(o, box)).toBeCloseTo(insideProbability(o, swapped), 12);
	});

	it('moves objects between world and ego coordinates through the ego pose', () => {
		const ego = { x: 100, y: 50, heading: Math.PI / 2 };
		// Facing +y in the world: a world point 10 m north of the ego is 10 m ahead.
		const o = changeCoords({ mean: [100, 60], cov: [4, 0, 1] }, 'world', 'ego', ego);
		expect(o?.mean[0]).toBeCloseTo(10, 12);
		expect(o?.mean[1]).toBeCloseTo(0, 12);
		expect(o?.cov?.[0]).toBeCloseTo(1, 12);
		expect(o?.cov?.[2]).toBeCloseTo(4, 12);
		const back = o && changeCoords(o, 'ego', 'world', ego);
		expect(back?.mean[0]).toBeCloseTo(100, 12);
		expect(back?.mean[1]).toBeCloseTo(60, 12);
		expect(changeCoords({ mean: [0, 0] }, 'world', 'ego', undefined)).toBeNull();
	});
});

describe('far-object shortcut', () => {
	it('agrees with the full bivariate integration to 1e-15 for objects 8σ or more from the zone', () => {
		// the marginal bound P(inside) ≤ Φ(−8) ≈ 6.2e-16 (standard normal tail, from memory) justifies returning 0
		const zone = {
			name: 'z',
			coords: 'ego' as const,
			x: [0, 20] as [number, number],
			y: [-1.75, 1.75] as [number, number]
		};
		for (const [mx, my, s] of [
			[40, 0, 2],
			[-17, 0.5, 2],
			[10, 30, 3],
			[10, -1.75 - 8.01, 1]
		]) {
			const o = {
				mean: [mx, my] as [number, number],
				cov: [s * s, 0.2 * s * s, s * s] as [number, number, number]
			};
			const full =
				gaussianRectProbability(o.mean, o.cov, { xMin: 0, xMax: 20, yMin: -1.75, yMax: 1.75 }) ?? 0;
			expect(Math.abs(insideProbability(o, zone) - full)).toBeLessThan(1e-15);
		}
	});
});
