/**
 * Small dense matrices (2×2, 4×4) stored row-major in Float64Array.
 * Every function takes its dimensions explicitly and an optional `out`, so the filter's hot loop
 * can reuse buffers instead of allocating per component.
 */

export type Mat = Float64Array;

export function zeros(rows: number, cols = rows): Mat {
	return new Float64Array(rows * cols);
}

export function identity(n: number): Mat {
	const out = zeros(n);
	for (let i = 0; i < n; i++) out[i * n + i] = 1;
	return out;
}

export function fromRows(rows: readonly (readonly number[])[]): Mat {
	const r = rows.length;
	const c = r === 0 ? 0 : rows[0].length;
	const out = zeros(r, c);
	for (let i = 0; i < r; i++) {
		if (rows[i].length !== c) throw new Error('fromRows: ragged rows');
		for (let j = 0; j < c; j++) out[i * c + j] = rows[i][j];
	}
	return out;
}

export function toRows(a: Mat, rows: number, cols: number): number[][] {
	const out: number[][] = [];
	for (let i = 0; i < rows; i++) out.push(Array.from(a.subarray(i * cols, (i + 1) * cols)));
	return out;
}

export function diag(values: readonly number[]): Mat {
	const n = values.length;
	const out = zeros(n);
	for (let i = 0; i < n; i++) out[i * n + i] = values[i];
	return out;
}

/** out (n×m) = a (n×k) · b (k×m). `out` must not alias `a` or `b`. */
export function mul(a: Mat, b: Mat, n: number, k: number, m: number, out: Mat = zeros(n, m)): Mat {
	for (let i = 0; i < n; i++) {
		const ai = i * k;
		for (let j = 0; j < m; j++) {
			let s = 0;
			for (let p = 0; p < k; p++) s += a[ai + p] * b[p * m + j];
			out[i * m + j] = s;
		}
	}
	return out;
}

/** out (n×m) = a (n×k) · bᵀ where b is m×k. Saves forming the transpose in P·Hᵀ and F·P·Fᵀ. */
export function mulT(a: Mat, b: Mat, n: number, k: number, m: number, out: Mat = zeros(n, m)): Mat {
	for (let i = 0; i < n; i++) {
		const ai = i * k;
		for (let j = 0; j < m; j++) {
			const bj = j * k;
			let s = 0;
			for (let p = 0; p < k; p++) s += a[ai + p] * b[bj + p];
			out[i * m + j] = s;
		}
	}
	return out;
}

/** out (n) = a (n×k) · v (k). */
export function mulVec(
	a: Mat,
	v: ArrayLike<number>,
	n: number,
	k: number,
	out: Mat = zeros(n, 1)
): Mat {
	for (let i = 0; i < n; i++) {
		let s = 0;
		for (let p = 0; p < k; p++) s += a[i * k + p] * v[p];
		out[i] = s;
	}
	return out;
}

export function transpose(a: Mat, rows: number, cols: number, out: Mat = zeros(cols, rows)): Mat {
	for (let i = 0; i < rows; i++) for (let j = 0; j < cols; j++) out[j * rows + i] = a[i * cols + j];
	return out;
}

export function add(a: Mat, b: Mat, out: Mat = new Float64Array(a.length)): Mat {
	for (let i = 0; i < a.length; i++) out[i] = a[i] + b[i];
	return out;
}

export function sub(a: Mat, b: Mat, out: Mat = new Float64Array(a.length)): Mat {
	for (let i = 0; i < a.length; i++) out[i] = a[i] - b[i];
	return out;
}

export function scale(a: Mat, s: number, out: Mat = new Float64Array(a.length)): Mat {
	for (let i = 0; i < a.length; i++) out[i] = a[i] * s;
	return out;
}

/** Averages a with its transpose in place; rounding in P − K·S·Kᵀ otherwise drifts the halves apart. */
export function symmetrize(a: Mat, n: number): Mat {
	for (let i = 0; i < n; i++)
		for (let j = i + 1; j < n; j++) {
			const m = 0.5 * (a[i * n + j] + a[j * n + i]);
			a[i * n + j] = m;
			a[j * n + i] = m;
		}
	return a;
}

/**
 * Lower-triangular L with L·Lᵀ = a for symmetric positive-definite a.
 * Returns null when a is not positive definite (a pivot ≤ 0).
 */
export function cholesky(a: Mat, n: number, out: Mat = zeros(n)): Mat | null {
	out.fill(0);
	for (let j = 0; j < n; j++) {
		let d = a[j * n + j];
		for (let p = 0; p < j; p++) d -= out[j * n + p] * out[j * n + p];
		if (!(d > 0)) return null;
		const ljj = Math.sqrt(d);
		out[j * n + j] = ljj;
		for (let i = j + 1; i < n; i++) {
			let s = a[i * n + j];
			for (let p = 0; p < j; p++) s -= out[i * n + p] * out[j * n + p];
			out[i * n + j] = s / ljj;
		}
	}
	return out;
}

/** Solves (L·Lᵀ) X = B for X (n×m), given the Cholesky factor L. B may be aliased by out. */
export function cholSolve(L: Mat, b: Mat, n: number, m: number, out: Mat = zeros(n, m)): Mat {
	if (out !== b) out.set(b);
	for (let c = 0; c < m; c++) {
		for (let i = 0; i < n; i++) {
			let s = out[i * m + c];
			for (let p = 0; p < i; p++) s -= L[i * n + p] * out[p * m + c];
			out[i * m + c] = s / L[i * n + i];
		}
		for (let i = n - 1; i >= 0; i--) {
			let s = out[i * m + c];
			for (let p = i + 1; p < n; p++) s -= L[p * n + i] * out[p * m + c];
			out[i * m + c] = s / L[i * n + i];
		}
	}
	return out;
}

/** Inverse of a symmetric positive-definite matrix via Cholesky; throws if a is not SPD. */
export function invSpd(a: Mat, n: number, out: Mat = zeros(n)): Mat {
	const L = cholesky(a, n);
	if (!L) throw new Error('invSpd: matrix is not positive definite');
	return cholSolve(L, identity(n), n, n, out);
}

/** log det(a) from its Cholesky factor: 2 Σ log Lᵢᵢ. */
export function logDetChol(L: Mat, n: number): number {
	let s = 0;
	for (let i = 0; i < n; i++) s += Math.log(L[i * n + i]);
	return 2 * s;
}

/** Determinant of a general square matrix by LU with partial pivoting. */
export function det(a: Mat, n: number): number {
	const m = Float64Array.from(a);
	let d = 1;
	for (let c = 0; c < n; c++) {
		let piv = c;
		for (let r = c + 1; r < n; r++) if (Math.abs(m[r * n + c]) > Math.abs(m[piv * n + c])) piv = r;
		const pv = m[piv * n + c];
		if (pv === 0) return 0;
		if (piv !== c) {
			for (let j = 0; j < n; j++) {
				const t = m[c * n + j];
				m[c * n + j] = m[piv * n + j];
				m[piv * n + j] = t;
			}
			d = -d;
		}
		d *= pv;
		for (let r = c + 1; r < n; r++) {
			const f = m[r * n + c] / pv;
			if (f === 0) continue;
			for (let j = c; j < n; j++) m[r * n + j] -= f * m[c * n + j];
		}
	}
	return d;
}

/** Squared Mahalanobis distance dᵀ (L·Lᵀ)⁻¹ d = |L⁻¹ d|², by forward substitution only. */
export function mahalanobis2Chol(
	L: Mat,
	d: ArrayLike<number>,
	n: number,
	y: Mat = zeros(n, 1)
): number {
	let s2 = 0;
	for (let i = 0; i < n; i++) {
		let s = d[i];
		for (let p = 0; p < i; p++) s -= L[i * n + p] * y[p];
		y[i] = s / L[i * n + i];
		s2 += y[i] * y[i];
	}
	return s2;
}
