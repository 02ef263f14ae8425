/**
 * GOSPA solved per connected component of the "closer than c" graph, with the near pairs found by a
 * grid, must give what one assignment over the whole cut-off cost matrix gives.
 *
 * Why it may (GOSPA with α = 2: A. S. Rahmathullah, Á. F. García-Fernández, L. Svensson,
 * "Generalized optimal sub-pattern assignment metric", FUSION 2017, Proposition 1): GOSPA^p is
 * the minimum over assignments of Σ min(d, c)^p + (c^p/2)·(|X| + |Y| − 2·|pairs|), so a pair at
 * d ≥ c costs c^p, exactly what leaving both unassigned costs (c^p/2 each). Such pairs never need
 * to be made, no pair crosses two components below c, and the minimum splits into one per
 * component.
 */
import { describe, expect, it } from 'vitest';
import { solveAssignment } from './assignment';
import { closePairs, gospa, gospaFromClosePairs, type GospaResult, type Point } from './gospa';
import { Rng } from '../random';
import { expectPublishedGospa } from './test-support';
import published from './fixtures/gospa-published-example.json';

/** GOSPA^p and the assignment from one solve over the full m × n cut-off cost matrix, no decomposition. */
function fullSolve(
	X: readonly Point[],
	Y: readonly Point[],
	c: number,
	p: number,
	weights?: number[]
): { gospaP: number; truthToEstimate: number[] } {
	const m = X.length;
	const n = Y.length;
	const cp = Math.pow(c, p);
	const cost = new Float64Array(m * n);
	const near = new Uint8Array(m * n);
	for (let i = 0; i < m; i++) {
		for (let j = 0; j < n; j++) {
			let s = 0;
			for (let k = 0; k < X[i].length; k++) {
				const d = X[i][k] - Y[j][k];
				s += weights ? weights[k] * d * d : d * d;
			}
			near[i * n + j] = s < c * c ? 1 : 0;
			cost[i * n + j] = s < c * c ? Math.pow(s, p / 2) : cp;
		}
	}
	const sol = solveAssignment(cost, m, n);
	const truthToEstimate = Array.from(sol.rowToCol, (j, i) => (j >= 0 && near[i * n + j] ? j : -1));
	return { gospaP: sol.cost + (cp / 2) * Math.abs(m - n), truthToEstimate };
}

function flat(points: readonly Point[]): Float64Array {
	return Float64Array.from(points.flatMap((q) => Array.from(q)));
}

/** GOSPA through closePairs with the grid forced on or off. */
function viaPairs(
	X: readonly Point[],
	Y: readonly Point[],
	c: number,
	p: number,
	grid: boolean,
	weights?: number[]
): GospaResult {
	const pairs = closePairs(flat(X), X.length, flat(Y), Y.length, c, { grid, weights });
	if (!pairs) throw new Error('no pairs');
	return gospaFromClosePairs(pairs, X.length, Y.length, c, p);
}

function expectSameAsFull(
	r: GospaResult,
	X: Point[],
	Y: Point[],
	c: number,
	p: number,
	w?: number[]
) {
	const full = fullSolve(X, Y, c, p, w);
	const got = Math.pow(r.gospa, p);
	expect(Math.abs(got - full.gospaP)).toBeLessThanOrEqual(1e-9 * Math.max(1, full.gospaP));
	// continuous random points: the optimum is unique, so the pairs themselves agree
	expect(Array.from(r.truthToEstimate)).toEqual(full.truthToEstimate);
}

const source = new Rng(4242);
const rand = () => source.next();
const gauss = () => source.normal();

/** Objects in a few tight clusters (crowds, parked cars), so components of many objects form. */
function clustered(count: number, clusters: number, spread: number, span: number): Point[] {
	const centres = Array.from({ length: clusters }, () => [rand() * span, rand() * span]);
	return Array.from({ length: count }, (): Point => {
		const o = centres[Math.floor(rand() * clusters)];
		return [o[0] + spread * gauss(), o[1] + spread * gauss()];
	});
}

describe('GOSPA by components equals one solve over the whole matrix', () => {
	it('on uniform random sets of every density, p = 1, 2, 3', () => {
		for (let trial = 0; trial < 120; trial++) {
			const m = Math.floor(rand() * 90);
			const n = Math.floor(rand() * 90);
			const span = 5 + rand() * 200;
			const X = Array.from({ length: m }, (): Point => [rand() * span, rand() * span]);
			const Y = Array.from({ length: n }, (): Point => [rand() * span, rand() * span]);
			const c = 2 + rand() * 15;
			const p = [1, 2, 3][trial % 3];
			const r = gospa(X, Y, { c, p });
			expectSameAsFull(r, X, Y, c, p);
			expect(viaPairs(X, Y, c, p, true)).toEqual(r);
			expect(viaPairs(X, Y, c, p, false)).toEqual(r);
		}
	});

	it('on clustered sets, whose components hold tens of objects', () => {
		let largest = 0;
		for (let trial = 0; trial < 60; trial++) {
			const X = clustered(40 + Math.floor(rand() * 120), 1 + Math.floor(rand() * 6), 3, 100);
			// estimates: most near a truth object, some spread over the clusters as clutter
			const Y = X.filter(() => rand() < 0.85).map((t): Point => [t[0] + gauss(), t[1] + gauss()]);
			Y.push(...clustered(Math.floor(rand() * 30), 3, 4, 100));
			const c = 4 + rand() * 6;
			const p = 1 + rand() * 2;
			const r = gospa(X, Y, { c, p });
			expectSameAsFull(r, X, Y, c, p);
			expect(viaPairs(X, Y, c, p, true)).toEqual(r);
			const pairs = closePairs(flat(X), X.length, flat(Y), Y.length, c);
			largest = Math.max(largest, pairs?.count ?? 0);
		}
		// the clusters really make big components (many near pairs), not only 1 × 1 ones
		expect(largest).toBeGreaterThan(2000);
	});

	it('on the weighted full state, with zero weights and in one dimension', () => {
		for (let trial = 0; trial < 60; trial++) {
			const dim = 1 + (trial % 4);
			const weights = Array.from({ length: dim }, (_, k) =>
				k === 1 && trial % 3 === 0 ? 0 : 0.2 + rand() * 3
			);
			const point = (): Point => Array.from({ length: dim }, () => rand() * 40 - 20);
			const X = Array.from({ length: Math.floor(rand() * 70) }, point);
			const Y = X.map((x): Point => Array.from(x, (v) => v + gauss())).concat(
				Array.from({ length: Math.floor(rand() * 20) }, point)
			);
			const c = 1 + rand() * 5;
			const r = gospa(X, Y, { c, p: 2, weights });
			expectSameAsFull(r, X, Y, c, 2, weights);
			expect(viaPairs(X, Y, c, 2, true, weights)).toEqual(r);
		}
	});

	it('finds exactly the brute-force near pairs at awkward coordinates (negative, 1e9 away, on cell edges, at d = c)', () => {
		const key = (r: ReturnType<typeof closePairs>) => {
			const out: string[] = [];
			for (let e = 0; e < (r?.count ?? 0); e++)
				out.push(`${r?.truth[e]}:${r?.estimate[e]}:${r?.d2[e]}`);
			return out.sort();
		};
		for (let trial = 0; trial < 80; trial++) {
			const c = [0.001, 0.3, 1, 7][trial % 4];
			const offset = [0, -3e4, 1e9, -1e9][Math.floor(trial / 4) % 4];
			const n = 30 + Math.floor(rand() * 60);
			// points on a lattice of spacing c (pairs at exactly d = c, points on cell boundaries) plus jitter
			const point = (): Point => [
				offset + Math.round(rand() * 12) * c + (rand() < 0.5 ? 0 : c * 0.5 * gauss()),
				offset + Math.round(rand() * 12) * c + (rand() < 0.5 ? 0 : c * 0.5 * gauss())
			];
			const X = Array.from({ length: n }, point);
			const Y = Array.from({ length: n }, point);
			const grid = closePairs(flat(X), n, flat(Y), n, c, { grid: true });
			const brute = closePairs(flat(X), n, flat(Y), n, c, { grid: false });
			expect(key(grid)).toEqual(key(brute));
		}
	});

	it('reproduces the published check value through the grid', () => {
		// Source: the GOSPA authors' reference MATLAB implementation output, see fixtures/gospa-published-example.json.
		const X = published.truth_X;
		const Y = published.estimates_Y;
		const r = viaPairs(X, Y, published.c, published.p, true);
		expectPublishedGospa(r);
		expect(Math.pow(r.gospa, published.p)).toBeCloseTo(
			fullSolve(X, Y, published.c, published.p).gospaP,
			10
		);
	});

	it('keeps a frame of 5,000 spread-out objects to near pairs only', () => {
		const X = Array.from({ length: 5000 }, (): Point => [rand() * 7000, rand() * 7000]);
		const Y = X.map((t): Point => [t[0] + gauss(), t[1] + gauss()]);
		const pairs = closePairs(flat(X), 5000, flat(Y), 5000, 10);
		// every truth object's own estimate, and few others: 25 million pairs never measured or held
		expect(pairs?.count).toBeGreaterThanOrEqual(5000);
		expect(pairs?.count).toBeLessThan(10_000);
		const r = gospa(X, Y, { c: 10, p: 2 });
		expect(r.pairs.length).toBeGreaterThan(4990);
	});

	it('ignores pairs at or beyond c handed to it, and rejects NaN distances', () => {
		const pairs = {
			count: 2,
			truth: Int32Array.of(0, 0),
			estimate: Int32Array.of(0, 1),
			d2: Float64Array.of(4, 100)
		};
		const r = gospaFromClosePairs(pairs, 1, 2, 10, 2);
		expect(r.pairs).toEqual([[0, 0]]);
		expect(r.gospa).toBeCloseTo(Math.sqrt(4 + 50), 12);
		expect(closePairs(Float64Array.of(0, 0), 1, Float64Array.of(NaN, 0), 1, 10)).toBeNull();
	});
});
