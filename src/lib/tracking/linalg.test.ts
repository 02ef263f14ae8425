import { describe, expect, it } from 'vitest';
import {
	add,
	cholesky,
	cholSolve,
	det,
	fromRows,
	identity,
	invSpd,
	logDetChol,
	mahalanobis2Chol,
	mul,
	mulT,
	mulVec,
	sub,
	toRows,
	transpose
} from './linalg';

// A symmetric positive-definite 4×4 with off-diagonal terms, like a CV covariance.
const A = fromRows([
	[4, 2, 0.6, 0],
	[2, 5, 0.2, 0.4],
	[0.6, 0.2, 3, 0.5],
	[0, 0.4, 0.5, 2]
]);

function close(a: Float64Array, b: Float64Array, tol = 1e-12): void {
	expect(a.length).toBe(b.length);
	for (let i = 0; i < a.length; i++) expect(Math.abs(a[i] - b[i])).toBeLessThan(tol);
}

describe('small dense linear algebra', () => {
	it('multiplies a 2×3 by a 3×2 (hand-computed)', () => {
		const a = fromRows([
			[1, 2, 3],
			[4, 5, 6]
		]);
		const b = fromRows([
			[7, 8],
			[9, 10],
			[11, 12]
		]);
		// 1·7+2·9+3·11 = 58, 1·8+2·10+3·12 = 64, 4·7+5·9+6·11 = 139, 4·8+5·10+6·12 = 154 (by hand)
		expect(toRows(mul(a, b, 2, 3, 2), 2, 2)).toEqual([
			[58, 64],
			[139, 154]
		]);
		close(mulT(a, transpose(b, 3, 2), 2, 3, 2), mul(a, b, 2, 3, 2));
		expect(Array.from(mulVec(a, [1, 1, 1], 2, 3))).toEqual([6, 15]);
	});

	it('adds and subtracts elementwise', () => {
		const s = add(A, identity(4));
		close(sub(s, A), identity(4));
	});

	it('Cholesky factor reproduces the matrix and is lower triangular', () => {
		const L = cholesky(A, 4);
		expect(L).not.toBeNull();
		if (!L) return;
		for (let i = 0; i < 4; i++) for (let j = i + 1; j < 4; j++) expect(L[i * 4 + j]).toBe(0);
		close(mulT(L, L, 4, 4, 4), A, 1e-12);
	});

	it('Cholesky refuses a matrix that is not positive definite', () => {
		// eigenvalues 3 and −1 (by hand: (1−λ)² = 4)
		expect(
			cholesky(
				fromRows([
					[1, 2],
					[2, 1]
				]),
				2
			)
		).toBeNull();
	});

	it('inverse via Cholesky times the matrix is the identity', () => {
		close(mul(invSpd(A, 4), A, 4, 4, 4), identity(4), 1e-12);
	});

	it('solves A·X = B for several right-hand sides', () => {
		const X = fromRows([
			[1, -1],
			[2, 0.5],
			[0, 3],
			[-2, 1]
		]);
		const B = mul(A, X, 4, 4, 2);
		const L = cholesky(A, 4);
		if (!L) throw new Error('not SPD');
		close(cholSolve(L, B, 4, 2), X, 1e-12);
	});

	it('determinant: hand-computed 2×2 and 3×3, and agreement with the Cholesky log-determinant', () => {
		// ad − bc = 3·4 − 1·2 = 10 (by hand)
		expect(
			det(
				fromRows([
					[3, 1],
					[2, 4]
				]),
				2
			)
		).toBeCloseTo(10, 12);
		// a zero on the leading diagonal forces a row swap: 0·(…) − 1·(1·1 − 0·2) + 2·(1·3 − 1·2) = 1 (by hand)
		expect(
			det(
				fromRows([
					[0, 1, 2],
					[1, 1, 0],
					[2, 3, 1]
				]),
				3
			)
		).toBeCloseTo(1, 12);
		const L = cholesky(A, 4);
		if (!L) throw new Error('not SPD');
		expect(Math.log(det(A, 4))).toBeCloseTo(logDetChol(L, 4), 12);
	});

	it('Mahalanobis distance through the Cholesky factor equals dᵀ A⁻¹ d', () => {
		const d = [0.3, -1, 2, 0.5];
		const L = cholesky(A, 4);
		if (!L) throw new Error('not SPD');
		const Ainv = invSpd(A, 4);
		const direct = d.reduce(
			(s, di, i) => s + di * d.reduce((t, dj, j) => t + Ainv[i * 4 + j] * dj, 0),
			0
		);
		expect(mahalanobis2Chol(L, d, 4)).toBeCloseTo(direct, 12);
	});
});
