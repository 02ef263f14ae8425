/**
 * Bivariate normal probabilities by A. Genz's method ("Numerical computation of rectangular
 * bivariate and trivariate normal and t probabilities", Statistics and Computing 14, 2004), which
 * refines Z. Drezner and G. O. Wesolowsky ("On the computation of the bivariate normal integral",
 * J. Statist. Comput. Simul. 35, 1990): Gauss–Legendre quadrature of 6, 12 or 20 points on a
 * one-dimensional integral, about 15 digits.
 */
import { normalCdf } from './special';

interface Rule {
	x: Float64Array;
	w: Float64Array;
}

/** The non-negative half of the n-point Gauss–Legendre rule on [−1, 1] (n even), by Newton on Pₙ. */
export function gaussLegendreHalf(n: number): Rule {
	const half = n / 2;
	const x = new Float64Array(half);
	const w = new Float64Array(half);
	for (let i = 0; i < half; i++) {
		let z = Math.cos((Math.PI * (i + 0.75)) / (n + 0.5));
		let dp = 0;
		for (let iter = 0; iter < 100; iter++) {
			let p1 = 1;
			let p2 = 0;
			for (let j = 1; j <= n; j++) {
				const p3 = p2;
				p2 = p1;
				p1 = ((2 * j - 1) * z * p2 - (j - 1) * p3) / j;
			}
			dp = (n * (z * p1 - p2)) / (z * z - 1);
			const dz = p1 / dp;
			z -= dz;
			if (Math.abs(dz) < 1e-16) break;
		}
		x[i] = z;
		w[i] = 2 / ((1 - z * z) * dp * dp);
	}
	return { x, w };
}

const RULES = [gaussLegendreHalf(6), gaussLegendreHalf(12), gaussLegendreHalf(20)];
const TWO_PI = 2 * Math.PI;

/** P(X > h, Y > k) for standard normals with correlation r ∈ [−1, 1]. */
export function bivariateNormalUpper(h: number, k: number, r: number): number {
	if (Number.isNaN(h) || Number.isNaN(k) || !(r >= -1 && r <= 1)) return NaN;
	if (h === Infinity || k === Infinity) return 0;
	if (h === -Infinity) return k === -Infinity ? 1 : normalCdf(-k);
	if (k === -Infinity) return normalCdf(-h);
	if (r === 0) return normalCdf(-h) * normalCdf(-k);

	const ar = Math.abs(r);
	const rule = ar < 0.3 ? RULES[0] : ar < 0.75 ? RULES[1] : RULES[2];
	const { x, w } = rule;
	let hk = h * k;
	let bvn = 0;
	if (ar < 0.925) {
		const hs = (h * h + k * k) / 2;
		const asr = Math.asin(r);
		for (let i = 0; i < x.length; i++) {
			let sn = Math.sin((asr * (1 - x[i])) / 2);
			bvn += w[i] * Math.exp((sn * hk - hs) / (1 - sn * sn));
			sn = Math.sin((asr * (1 + x[i])) / 2);
			bvn += w[i] * Math.exp((sn * hk - hs) / (1 - sn * sn));
		}
		bvn = (bvn * asr) / (2 * TWO_PI) + normalCdf(-h) * normalCdf(-k);
	} else {
		if (r < 0) {
			k = -k;
			hk = -hk;
		}
		if (ar < 1) {
			const as = (1 - r) * (1 + r);
			let a = Math.sqrt(as);
			const bs = (h - k) * (h - k);
			const c = (4 - hk) / 8;
			const d = (12 - hk) / 16;
			bvn =
				a *
				Math.exp(-(bs / as + hk) / 2) *
				(1 - (c * (bs - as) * (1 - (d * bs) / 5)) / 3 + (c * d * as * as) / 5);
			if (hk > -160) {
				const b = Math.sqrt(bs);
				bvn -=
					Math.exp(-hk / 2) *
					Math.sqrt(TWO_PI) *
					normalCdf(-b / a) *
					b *
					(1 - (c * bs * (1 - (d * bs) / 5)) / 3);
			}
			a /= 2;
			for (let i = 0; i < x.length; i++) {
				for (const s of [-1, 1]) {
					const xs = (a * (s * x[i] + 1)) ** 2;
					const rs = Math.sqrt(1 - xs);
					bvn +=
						a *
						w[i] *
						(Math.exp(-bs / (2 * xs) - hk / (1 + rs)) / rs -
							Math.exp(-(bs / xs + hk) / 2) * (1 + c * xs * (1 + d * xs)));
				}
			}
			bvn = -bvn / TWO_PI;
		}
		if (r > 0) {
			bvn += normalCdf(-Math.max(h, k));
		} else if (h >= k) {
			bvn = -bvn;
		} else {
			const between = h < 0 ? normalCdf(k) - normalCdf(h) : normalCdf(-h) - normalCdf(-k);
			bvn = between - bvn;
		}
	}
	return Math.min(1, Math.max(0, bvn));
}

/** P(X ≤ h, Y ≤ k) for standard normals with correlation r. */
export function bivariateNormalCdf(h: number, k: number, r: number): number {
	return bivariateNormalUpper(-h, -k, r);
}

export interface Rect {
	xMin: number;
	xMax: number;
	yMin: number;
	yMax: number;
}

/** Planar covariance as (σxx, σxy, σyy). */
export type Cov2 = readonly [number, number, number];

/**
 * P(mean + noise ∈ rect) for Gaussian noise with covariance `cov`. A covariance that is not
 * positive semi-definite (or not finite) is reported as null so callers can fall back to a point.
 */
export function gaussianRectProbability(
	mean: readonly [number, number],
	cov: Cov2,
	rect: Rect
): number | null {
	const [sxx, sxy, syy] = cov;
	if (!Number.isFinite(sxx) || !Number.isFinite(sxy) || !Number.isFinite(syy)) return null;
	if (sxx < 0 || syy < 0 || sxy * sxy > sxx * syy * (1 + 1e-12)) return null;
	const sx = Math.sqrt(sxx);
	const sy = Math.sqrt(syy);
	const inX = mean[0] >= rect.xMin && mean[0] <= rect.xMax;
	const inY = mean[1] >= rect.yMin && mean[1] <= rect.yMax;
	const interval = (m: number, s: number, lo: number, hi: number) =>
		normalCdf((hi - m) / s) - normalCdf((lo - m) / s);
	if (sx === 0 && sy === 0) return inX && inY ? 1 : 0;
	if (sx === 0) return inX ? interval(mean[1], sy, rect.yMin, rect.yMax) : 0;
	if (sy === 0) return inY ? interval(mean[0], sx, rect.xMin, rect.xMax) : 0;
	const rho = Math.max(-1, Math.min(1, sxy / (sx * sy)));
	const a1 = (rect.xMin - mean[0]) / sx;
	const b1 = (rect.xMax - mean[0]) / sx;
	const a2 = (rect.yMin - mean[1]) / sy;
	const b2 = (rect.yMax - mean[1]) / sy;
	const p =
		bivariateNormalUpper(a1, a2, rho) -
		bivariateNormalUpper(b1, a2, rho) -
		bivariateNormalUpper(a1, b2, rho) +
		bivariateNormalUpper(b1, b2, rho);
	return Math.min(1, Math.max(0, p));
}
