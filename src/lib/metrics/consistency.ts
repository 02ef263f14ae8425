/**
 * Filter consistency by the normalized estimation error squared, NEES = eᵀ P⁻¹ e
 * (Y. Bar-Shalom, X. R. Li, T. Kirubarajan, Estimation with Applications to Tracking and
 * Navigation, Wiley 2001, ch. 5.4).
 */
import { DEFAULT_LIMITS } from '../protocol/limits';
import { asymmetricAt } from '../protocol/validate';
import { chiSquareQuantile } from './special';

/**
 * eᵀ P⁻¹ e through a Cholesky factor of P's symmetric part (P + Pᵀ)/2; null when P is not symmetric within
 * the protocol's tolerance (the one ingest accepts, so every covariance a frame may carry gets a NEES)
 * or its symmetric part is not positive definite.
 */
export function nees(
	error: ArrayLike<number>,
	cov: ArrayLike<number>,
	symmetryTolerance: number = DEFAULT_LIMITS.symmetryTolerance
): number | null {
	const n = error.length;
	if (cov.length !== n * n || n === 0) return null;
	if (asymmetricAt(cov, n, symmetryTolerance) >= 0) return null;
	const L = new Float64Array(n * n);
	for (let i = 0; i < n; i++) {
		for (let j = 0; j <= i; j++) {
			let s = i === j ? cov[i * n + i] : (cov[i * n + j] + cov[j * n + i]) / 2;
			for (let k = 0; k < j; k++) s -= L[i * n + k] * L[j * n + k];
			if (i === j) {
				if (!(s > 0)) return null;
				L[i * n + i] = Math.sqrt(s);
			} else {
				L[i * n + j] = s / L[j * n + j];
			}
		}
	}
	// Forward substitution L y = e; then NEES = |y|².
	let total = 0;
	const y = new Float64Array(n);
	for (let i = 0; i < n; i++) {
		let s = error[i];
		for (let k = 0; k < i; k++) s -= L[i * n + k] * y[k];
		y[i] = s / L[i * n + i];
		total += y[i] * y[i];
	}
	return Number.isFinite(total) ? total : null;
}

/** Rows and columns `indices` of a row-major n×n matrix, as a row-major k×k matrix. */
export function subBlock(
	matrix: ArrayLike<number>,
	n: number,
	indices: readonly number[]
): Float64Array {
	const k = indices.length;
	const out = new Float64Array(k * k);
	for (let a = 0; a < k; a++) {
		for (let b = 0; b < k; b++) out[a * k + b] = matrix[indices[a] * n + indices[b]];
	}
	return out;
}

export interface NeesBounds {
	lower: number;
	upper: number;
}

/**
 * Two-sided acceptance interval for the average of N NEES samples of dimension n: under the
 * consistency hypothesis N·ε̄ ~ χ²_{Nn}, so the interval is [χ²_{Nn}((1−level)/2), χ²_{Nn}((1+level)/2)] / N.
 * The book states it for N independent Monte Carlo runs; applied to samples along one run it
 * assumes the errors are roughly independent over time, which makes it a screening test.
 */
export function neesBounds(samples: number, dim: number, level = 0.95): NeesBounds {
	if (!(samples >= 1) || !(dim >= 1))
		throw new RangeError('need at least one sample of dimension ≥ 1');
	if (!(level > 0 && level < 1)) throw new RangeError(`level must be in (0, 1), got ${level}`);
	const dof = samples * dim;
	return {
		lower: chiSquareQuantile((1 - level) / 2, dof) / samples,
		upper: chiSquareQuantile((1 + level) / 2, dof) / samples
	};
}

/**
 * 'overconfident': errors larger than the covariance admits (P too small);
 * 'underconfident': errors smaller than the covariance admits (P too large).
 */
export type NeesVerdict = 'consistent' | 'overconfident' | 'underconfident';

export function neesVerdict(mean: number, samples: number, dim: number, level = 0.95): NeesVerdict {
	const { lower, upper } = neesBounds(samples, dim, level);
	if (mean > upper) return 'overconfident';
	if (mean < lower) return 'underconfident';
	return 'consistent';
}
