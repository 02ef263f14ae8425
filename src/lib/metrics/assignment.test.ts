import { describe, expect, it } from 'vitest';
import munkres from 'munkres';
import { linearSumAssignment } from 'linear-sum-assignment';
import { InfeasibleAssignmentError, solveAssignment } from './assignment';
import { bruteForceAssignmentCost } from './test-support';
import { seededRandom } from '../random';

function randomMatrix(rand: () => number, rows: number, cols: number, scale = 100): Float64Array {
	const m = new Float64Array(rows * cols);
	for (let k = 0; k < m.length; k++) m[k] = rand() * scale;
	return m;
}

function nested(m: Float64Array, rows: number, cols: number): number[][] {
	return Array.from({ length: rows }, (_, i) => Array.from(m.subarray(i * cols, (i + 1) * cols)));
}

function expectValidAssignment(
	m: ArrayLike<number>,
	rows: number,
	cols: number,
	a: ReturnType<typeof solveAssignment>
) {
	let pairs = 0;
	let sum = 0;
	for (let i = 0; i < rows; i++) {
		const j = a.rowToCol[i];
		if (j < 0) continue;
		pairs++;
		expect(a.colToRow[j]).toBe(i);
		sum += m[i * cols + j];
	}
	expect(pairs).toBe(Math.min(rows, cols));
	expect(a.cost).toBeCloseTo(sum, 9);
}

describe('solveAssignment', () => {
	it('handles empty matrices', () => {
		expect(solveAssignment(new Float64Array(0), 0, 5).cost).toBe(0);
		const a = solveAssignment(new Float64Array(0), 3, 0);
		expect(Array.from(a.rowToCol)).toEqual([-1, -1, -1]);
	});

	it('solves a hand-worked 3×3 case', () => {
		// Worked by hand: the diagonal costs 1+5+9=15, the optimum takes (0,1),(1,0),(2,2) = 2+4+9 = 15
		// or (0,2),(1,1),(2,0) = 3+5+7 = 15; every permutation of this matrix sums to 15.
		const m = Float64Array.from([1, 2, 3, 4, 5, 6, 7, 8, 9]);
		expect(solveAssignment(m, 3, 3).cost).toBe(15);
		// Worked by hand: the six permutations of [[4,1,3],[2,0,5],[3,2,2]] cost 6, 11, 5, 9, 7, 6 (min 5).
		const n = Float64Array.from([4, 1, 3, 2, 0, 5, 3, 2, 2]);
		const a = solveAssignment(n, 3, 3);
		expect(a.cost).toBe(5);
		expect(Array.from(a.rowToCol)).toEqual([1, 0, 2]);
	});

	it('solves rectangular cases both ways', () => {
		// Worked by hand: row 0 takes column 2 (cost 1), row 1 takes column 0 (cost 2).
		const wide = Float64Array.from([5, 9, 1, 2, 3, 4]);
		const w = solveAssignment(wide, 2, 3);
		expect(w.cost).toBe(3);
		expect(Array.from(w.rowToCol)).toEqual([2, 0]);
		expect(w.colToRow[1]).toBe(-1);
		const tall = Float64Array.from([5, 2, 9, 3, 1, 4]);
		const t = solveAssignment(tall, 3, 2);
		expect(t.cost).toBe(3);
		expect(Array.from(t.rowToCol)).toEqual([1, -1, 0]);
	});

	it('respects forbidden pairs and reports infeasibility', () => {
		const m = Float64Array.from([Infinity, 1, 1, Infinity]);
		expect(solveAssignment(m, 2, 2).cost).toBe(2);
		const bad = Float64Array.from([Infinity, Infinity, 1, 2]);
		expect(() => solveAssignment(bad, 2, 2)).toThrow(InfeasibleAssignmentError);
		expect(() => solveAssignment(Float64Array.from([NaN]), 1, 1)).toThrow(RangeError);
	});

	it('matches brute-force enumeration on random matrices up to 6 (with ties)', () => {
		const rand = seededRandom(11);
		for (let trial = 0; trial < 600; trial++) {
			const rows = 1 + Math.floor(rand() * 6);
			const cols = 1 + Math.floor(rand() * 6);
			// Integer costs in a small range force many ties, a known weak spot of assignment codes.
			const m = randomMatrix(rand, rows, cols, 1);
			if (trial % 2 === 0) for (let k = 0; k < m.length; k++) m[k] = Math.floor(m[k] * 4);
			const a = solveAssignment(m, rows, cols);
			expectValidAssignment(m, rows, cols, a);
			expect(a.cost).toBeCloseTo(bruteForceAssignmentCost(m, rows, cols), 9);
		}
	});

	it('agrees with npm munkres and linear-sum-assignment on random matrices', () => {
		const rand = seededRandom(12);
		const sizes: [number, number][] = [
			[10, 10],
			[40, 40],
			[100, 100],
			[30, 70],
			[70, 30],
			[120, 120]
		];
		for (const [rows, cols] of sizes) {
			for (let trial = 0; trial < 3; trial++) {
				const m = randomMatrix(rand, rows, cols);
				if (trial === 2) for (let k = 0; k < m.length; k++) m[k] = Math.min(m[k], 30);
				const ours = solveAssignment(m, rows, cols);
				expectValidAssignment(m, rows, cols, ours);
				const rowsNested = nested(m, rows, cols);
				const viaMunkres = munkres(rowsNested).reduce((s, [i, j]) => s + rowsNested[i][j], 0);
				const viaLsa = linearSumAssignment(rowsNested, { maximaze: false }).gain;
				expect(ours.cost).toBeCloseTo(viaMunkres, 7);
				expect(ours.cost).toBeCloseTo(viaLsa, 7);
			}
		}
	});

	it('accepts plain arrays as well as Float64Array', () => {
		expect(solveAssignment([3, 1, 2, 2], 2, 2).cost).toBe(3);
	});
});
