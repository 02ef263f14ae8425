import { describe, expect, it } from 'vitest';
import munkres from 'munkres';
import { linearSumAssignment } from 'linear-sum-assignment';
import { gospa, ospa, type Point } from './gospa';
import { bruteForceAssignmentCost, expectPublishedGospa } from './test-support';
import { seededRandom } from '../random';
import published from './fixtures/gospa-published-example.json';

const dist = (a: Point, b: Point) => Math.hypot(a[0] - b[0], a[1] - b[1]);

/** GOSPA (α = 2) straight from its definition: minimum over every partial assignment γ whose pairs have d < c. */
function bruteForceGospa(X: Point[], Y: Point[], c: number, p: number): number {
	const used = new Array<boolean>(Y.length).fill(false);
	let best = Infinity;
	const walk = (i: number, acc: number, assigned: number) => {
		if (i === X.length) {
			const unassigned = X.length + Y.length - 2 * assigned;
			best = Math.min(best, acc + (Math.pow(c, p) / 2) * unassigned);
			return;
		}
		walk(i + 1, acc, assigned);
		for (let j = 0; j < Y.length; j++) {
			const d = dist(X[i], Y[j]);
			if (used[j] || !(d < c)) continue;
			used[j] = true;
			walk(i + 1, acc + Math.pow(d, p), assigned + 1);
			used[j] = false;
		}
	};
	walk(0, 0, 0);
	return Math.pow(best, 1 / p);
}

/** OSPA straight from its definition, with the smaller set permuted into the larger. */
function bruteForceOspa(X: Point[], Y: Point[], c: number, p: number): number {
	const [S, L] = X.length <= Y.length ? [X, Y] : [Y, X];
	if (L.length === 0) return 0;
	const cost = new Float64Array(S.length * L.length);
	for (let i = 0; i < S.length; i++) {
		for (let j = 0; j < L.length; j++)
			cost[i * L.length + j] = Math.pow(Math.min(dist(S[i], L[j]), c), p);
	}
	const best = S.length === 0 ? 0 : bruteForceAssignmentCost(cost, S.length, L.length);
	return Math.pow((best + Math.pow(c, p) * (L.length - S.length)) / L.length, 1 / p);
}

function randomSet(rand: () => number, maxSize: number, span: number, offset = 0): Point[] {
	const n = Math.floor(rand() * (maxSize + 1));
	return Array.from({ length: n }, () => [offset + rand() * span, offset + rand() * span]);
}

describe('gospa: hand-worked cases from the definition (FUSION 2017, α = 2)', () => {
	it('is 0 for two empty sets', () => {
		const r = gospa([], [], { c: 10, p: 2 });
		expect(r).toMatchObject({ gospa: 0, localization: 0, missed: 0, falseCount: 0, pairs: [] });
		expect(r.ospa.ospa).toBe(0); // OSPA paper: d(∅, ∅) = 0
	});

	it('charges c^p/2 for one missed and for one false object', () => {
		const missed = gospa([[1, 2]], [], { c: 10, p: 2 });
		expect(missed.gospa).toBeCloseTo(Math.sqrt(50), 12); // (10²/2)^(1/2)
		expect(missed).toMatchObject({ missed: 1, falseCount: 0, localization: 0 });
		expect(missed.ospa.ospa).toBe(10); // OSPA paper: one set empty → c
		const falsePos = gospa([], [[1, 2]], { c: 10, p: 1 });
		expect(falsePos.gospa).toBe(5); // 10/2
		expect(falsePos).toMatchObject({ missed: 0, falseCount: 1 });
	});

	it('counts a pair at exactly d = c as one missed plus one false', () => {
		// (0,0)–(6,8) is exactly 10 apart; 6² + 8² = 100 is exact in floating point.
		const r = gospa([[0, 0]], [[6, 8]], { c: 10, p: 2 });
		expect(r).toMatchObject({ missed: 1, falseCount: 1, localization: 0, pairs: [] });
		expect(r.gospa).toBe(10); // sqrt(2 · 10²/2)
		expect(r.ospa).toEqual({ ospa: 10, localization: 10, cardinality: 0 });
		const inside = gospa([[0, 0]], [[6, 7.999]], { c: 10, p: 2 });
		expect(inside.pairs).toEqual([[0, 0]]);
	});

	it('works p = 1 and p = 2 by hand', () => {
		// X = {(0,0), (10,0)}, Y = {(3,4)}, c = 10: distances 5 and √65 ≈ 8.06; best is to pair
		// (0,0)–(3,4) and leave (10,0) missed.
		const X = [
			[0, 0],
			[10, 0]
		];
		const Y = [[3, 4]];
		const p1 = gospa(X, Y, { c: 10, p: 1 });
		expect(p1.gospa).toBeCloseTo(10, 12); // 5 + 10/2
		expect(p1).toMatchObject({ localization: 5, missed: 1, falseCount: 0, pairs: [[0, 0]] });
		expect(p1.ospa.ospa).toBeCloseTo(7.5, 12); // (5 + 10)/2
		expect(p1.ospa.localization).toBeCloseTo(2.5, 12);
		expect(p1.ospa.cardinality).toBeCloseTo(5, 12);
		const p2 = gospa(X, Y, { c: 10, p: 2 });
		expect(p2.gospa).toBeCloseTo(Math.sqrt(75), 12); // sqrt(25 + 100/2)
		expect(p2.localization).toBeCloseTo(25, 12);
		expect(p2.ospa.ospa).toBeCloseTo(Math.sqrt(62.5), 12); // sqrt((25 + 100)/2)
		expect(p2.ospa.localization).toBeCloseTo(Math.sqrt(12.5), 12);
		expect(p2.ospa.cardinality).toBeCloseTo(Math.sqrt(50), 12);
	});

	it('uses weights on the full state when given', () => {
		// State (x, y, v): weight 0 on v ignores a large speed error; weight 4 doubles the x error.
		expect(gospa([[0, 0, 0]], [[1, 0, 50]], { c: 10, p: 2, weights: [1, 1, 0] }).localization).toBe(
			1
		);
		expect(gospa([[0, 0, 0]], [[1, 0, 0]], { c: 10, p: 1, weights: [4, 1, 1] }).localization).toBe(
			2
		);
	});

	it('rejects bad parameters', () => {
		expect(() => gospa([], [], { c: 0, p: 2 })).toThrow(RangeError);
		expect(() => gospa([], [], { c: 1, p: 0.5 })).toThrow(RangeError);
		expect(() => gospa([], [], { c: 1, p: Infinity })).toThrow(RangeError);
	});
});

describe('gospa: published check value', () => {
	// Source: the GOSPA authors' reference MATLAB implementation output, see fixtures/gospa-published-example.json.
	it('reproduces d_gospa, the cost decomposition and the assignment', () => {
		expectPublishedGospa(
			gospa(published.truth_X, published.estimates_Y, { c: published.c, p: published.p })
		);
	});
});

describe('gospa: randomised comparisons', () => {
	it('matches brute-force enumeration of the definition for sets up to 6, with duplicates', () => {
		const rand = seededRandom(21);
		for (let trial = 0; trial < 400; trial++) {
			const X = randomSet(rand, 6, 20);
			const Y = randomSet(rand, 6, 20);
			if (trial % 5 === 0 && X.length > 0) Y.push(X[0], X[0]); // duplicates of one truth point
			if (Y.length > 6) Y.length = 6;
			const c = 1 + rand() * 9;
			const p = [1, 2, 3][trial % 3];
			const r = gospa(X, Y, { c, p });
			expect(r.gospa).toBeCloseTo(bruteForceGospa(X, Y, c, p), 9);
			expect(r.ospa.ospa).toBeCloseTo(bruteForceOspa(X, Y, c, p), 9);
		}
	});

	it('agrees with GOSPA computed through npm munkres and linear-sum-assignment', () => {
		const rand = seededRandom(22);
		for (const size of [15, 40, 90]) {
			for (let trial = 0; trial < 4; trial++) {
				const X = Array.from({ length: size }, (): Point => [rand() * 100, rand() * 100]);
				const Y = Array.from({ length: size + trial * 7 }, (): Point => [
					rand() * 100,
					rand() * 100
				]);
				const c = 8;
				const p = 2;
				// Through the same reduction: cut-off costs, then assignment of min(|X|, |Y|) pairs.
				const capped = X.map((x) => Y.map((y) => Math.pow(Math.min(dist(x, y), c), p)));
				const fill = (Math.pow(c, p) / 2) * Math.abs(X.length - Y.length);
				const viaMunkres = munkres(capped).reduce((s, [i, j]) => s + capped[i][j], 0) + fill;
				const viaLsa = linearSumAssignment(capped, { maximaze: false }).gain + fill;
				const r = gospa(X, Y, { c, p });
				expect(Math.pow(r.gospa, p)).toBeCloseTo(viaMunkres, 7);
				expect(Math.pow(r.gospa, p)).toBeCloseTo(viaLsa, 7);
			}
		}
	});
});

describe('gospa: metric properties and decomposition', () => {
	it('satisfies identity, symmetry and the triangle inequality on random triples', () => {
		const rand = seededRandom(23);
		for (let trial = 0; trial < 300; trial++) {
			const c = 2 + rand() * 6;
			const p = [1, 2, 2.5, 4][trial % 4];
			const [X, Y, Z] = [randomSet(rand, 5, 12), randomSet(rand, 5, 12), randomSet(rand, 5, 12)];
			const d = (A: Point[], B: Point[]) => gospa(A, B, { c, p }).gospa;
			const shuffled = [...X].reverse();
			expect(d(X, shuffled)).toBeCloseTo(0, 12);
			if (X.length !== Y.length) expect(d(X, Y)).toBeGreaterThan(0);
			expect(d(X, Y)).toBeCloseTo(d(Y, X), 10);
			expect(d(X, Z)).toBeLessThanOrEqual(d(X, Y) + d(Y, Z) + 1e-9);
			// OSPA is a metric too (Schuhmacher et al. 2008).
			const o = (A: Point[], B: Point[]) => ospa(A, B, { c, p }).ospa;
			expect(o(X, Z)).toBeLessThanOrEqual(o(X, Y) + o(Y, Z) + 1e-9);
		}
	});

	it('decomposes exactly: GOSPA^p = Σ d^p over the returned pairs + (c^p/2)(missed + false)', () => {
		const rand = seededRandom(24);
		for (let trial = 0; trial < 200; trial++) {
			const X = randomSet(rand, 6, 15);
			const Y = randomSet(rand, 6, 15);
			const c = 1 + rand() * 5;
			const p = 1 + rand() * 2;
			const r = gospa(X, Y, { c, p });
			// Recomputed from the returned pairs and points, then compared with the brute-force optimum.
			let loc = 0;
			for (const [i, j] of r.pairs) {
				expect(dist(X[i], Y[j])).toBeLessThan(c);
				loc += Math.pow(dist(X[i], Y[j]), p);
			}
			expect(r.localization).toBeCloseTo(loc, 10);
			expect(r.missed).toBe(X.length - r.pairs.length);
			expect(r.falseCount).toBe(Y.length - r.pairs.length);
			const brute = Math.pow(bruteForceGospa(X, Y, c, p), p);
			expect(loc + (Math.pow(c, p) / 2) * (r.missed + r.falseCount)).toBeCloseTo(brute, 9);
			expect(Math.pow(r.ospa.ospa, p)).toBeCloseTo(
				Math.pow(r.ospa.localization, p) + Math.pow(r.ospa.cardinality, p),
				9
			);
		}
	});
});

describe('gospa: numerical robustness', () => {
	it('is translation invariant at coordinates near 1e5', () => {
		const rand = seededRandom(25);
		for (let trial = 0; trial < 50; trial++) {
			const X = randomSet(rand, 6, 30);
			const Y = randomSet(rand, 6, 30);
			const shift = (S: Point[]) => S.map((q): Point => [q[0] + 1e5, q[1] - 1e5]);
			const near = gospa(X, Y, { c: 5, p: 2 });
			const far = gospa(shift(X), shift(Y), { c: 5, p: 2 });
			expect(far.gospa).toBeCloseTo(near.gospa, 6);
			expect(far.missed).toBe(near.missed);
		}
	});

	it('handles 300 objects, duplicates and identical sets', () => {
		const rand = seededRandom(26);
		const X = Array.from({ length: 300 }, (): Point => [1e5 * rand(), 1e5 * rand()]);
		const Y = [...X.slice(0, 150), ...X.slice(0, 150)];
		const r = gospa(X, Y, { c: 10, p: 2 });
		// 150 matched exactly, 150 truth missed unless a duplicate lands within c of another truth.
		expect(r.localization).toBeGreaterThanOrEqual(0);
		expect(r.missed + r.pairs.length).toBe(300);
		expect(r.falseCount + r.pairs.length).toBe(300);
		expect(r.pairs.length).toBeGreaterThanOrEqual(150);
		expect(gospa(X, X, { c: 10, p: 2 }).gospa).toBe(0);
		const same = Array.from({ length: 50 }, (): Point => [3, 3]);
		const s = gospa(same, same.slice(0, 20), { c: 10, p: 2 });
		expect(s).toMatchObject({ localization: 0, missed: 30, falseCount: 0 });
	});
});
