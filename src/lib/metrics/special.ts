/** Special functions: log-gamma, regularized incomplete gamma, normal and chi-square distributions. */

const LANCZOS = [
	0.99999999999980993, 676.5203681218851, -1259.1392167224028, 771.32342877765313,
	-176.61502916214059, 12.507343278686905, -0.13857109526572012, 9.9843695780195716e-6,
	1.5056327351493116e-7
];

/** ln Γ(x) for x > 0 (Lanczos approximation, g = 7, about 15 significant digits). */
export function logGamma(x: number): number {
	if (!(x > 0)) throw new RangeError(`logGamma needs x > 0, got ${x}`);
	if (x < 0.5) return Math.log(Math.PI / Math.sin(Math.PI * x)) - logGamma(1 - x);
	const z = x - 1;
	let a = LANCZOS[0];
	const t = z + 7.5;
	for (let k = 1; k < 9; k++) a += LANCZOS[k] / (z + k);
	return 0.5 * Math.log(2 * Math.PI) + (z + 0.5) * Math.log(t) - t + Math.log(a);
}

const EPS = 1e-16;
const TINY = 1e-300;

/** Series for P(a, x), good for x < a + 1. */
function gammaSeries(a: number, x: number): number {
	let ap = a;
	let del = 1 / a;
	let sum = del;
	// Terms fall off once n passes a few √a, so the cap grows with a.
	const maxIter = 1000 + 20 * Math.ceil(Math.sqrt(a));
	for (let n = 0; n < maxIter; n++) {
		ap += 1;
		del *= x / ap;
		sum += del;
		if (Math.abs(del) < Math.abs(sum) * EPS) break;
	}
	return sum * Math.exp(-x + a * Math.log(x) - logGamma(a));
}

/** Continued fraction for Q(a, x) (modified Lentz), good for x ≥ a + 1. */
function gammaContinuedFraction(a: number, x: number): number {
	let b = x + 1 - a;
	let c = 1 / TINY;
	let d = 1 / b;
	let h = d;
	const maxIter = 1000 + 20 * Math.ceil(Math.sqrt(a));
	for (let i = 1; i < maxIter; i++) {
		const an = -i * (i - a);
		b += 2;
		d = an * d + b;
		if (Math.abs(d) < TINY) d = TINY;
		c = b + an / c;
		if (Math.abs(c) < TINY) c = TINY;
		d = 1 / d;
		const del = d * c;
		h *= del;
		if (Math.abs(del - 1) < EPS) break;
	}
	return Math.exp(-x + a * Math.log(x) - logGamma(a)) * h;
}

/** Regularized lower incomplete gamma P(a, x). */
export function gammaP(a: number, x: number): number {
	if (!(a > 0) || !(x >= 0)) throw new RangeError(`gammaP needs a > 0, x ≥ 0 (a=${a}, x=${x})`);
	if (x === 0) return 0;
	if (x === Infinity) return 1;
	return x < a + 1 ? gammaSeries(a, x) : 1 - gammaContinuedFraction(a, x);
}

/** Regularized upper incomplete gamma Q(a, x) = 1 − P(a, x), without cancellation in the tail. */
export function gammaQ(a: number, x: number): number {
	if (!(a > 0) || !(x >= 0)) throw new RangeError(`gammaQ needs a > 0, x ≥ 0 (a=${a}, x=${x})`);
	if (x === 0) return 1;
	if (x === Infinity) return 0;
	return x < a + 1 ? 1 - gammaSeries(a, x) : gammaContinuedFraction(a, x);
}

/** Complementary error function through erfc(t) = Q(1/2, t²). */
export function erfc(t: number): number {
	if (Number.isNaN(t)) return NaN;
	if (t >= 0) return t > 27 ? 0 : gammaQ(0.5, t * t);
	return t < -6 ? 2 : 1 + gammaP(0.5, t * t);
}

/** Standard normal CDF Φ(x). */
export function normalCdf(x: number): number {
	return 0.5 * erfc(-x / Math.SQRT2);
}

/**
 * Standard normal quantile Φ⁻¹(q): P. J. Acklam's rational approximation (relative error about
 * 1e-9) polished by one Halley step on Φ.
 */
export function normalQuantile(q: number): number {
	if (!(q >= 0 && q <= 1)) throw new RangeError(`probability must be in [0, 1], got ${q}`);
	if (q === 0) return -Infinity;
	if (q === 1) return Infinity;
	const a = [
		-39.69683028665376, 220.9460984245205, -275.9285104469687, 138.357751867269, -30.66479806614716,
		2.506628277459239
	];
	const b = [
		-54.47609879822406, 161.5858368580409, -155.6989798598866, 66.80131188771972, -13.28068155288572
	];
	const c = [
		-0.007784894002430293, -0.3223964580411365, -2.400758277161838, -2.549732539343734,
		4.374664141464968, 2.938163982698783
	];
	const d = [0.007784695709041462, 0.3224671290700398, 2.445134137142996, 3.754408661907416];
	const low = 0.02425;
	let x: number;
	if (q < low) {
		const s = Math.sqrt(-2 * Math.log(q));
		x =
			(((((c[0] * s + c[1]) * s + c[2]) * s + c[3]) * s + c[4]) * s + c[5]) /
			((((d[0] * s + d[1]) * s + d[2]) * s + d[3]) * s + 1);
	} else if (q <= 1 - low) {
		const s = q - 0.5;
		const r = s * s;
		x =
			((((((a[0] * r + a[1]) * r + a[2]) * r + a[3]) * r + a[4]) * r + a[5]) * s) /
			(((((b[0] * r + b[1]) * r + b[2]) * r + b[3]) * r + b[4]) * r + 1);
	} else {
		const s = Math.sqrt(-2 * Math.log(1 - q));
		x =
			-(((((c[0] * s + c[1]) * s + c[2]) * s + c[3]) * s + c[4]) * s + c[5]) /
			((((d[0] * s + d[1]) * s + d[2]) * s + d[3]) * s + 1);
	}
	// Halley step; in the upper half the error is measured on the upper tail to keep digits.
	const e = q < 0.5 ? normalCdf(x) - q : 1 - q - normalCdf(-x);
	const u = e * Math.sqrt(2 * Math.PI) * Math.exp((x * x) / 2);
	return x - u / (1 + (x * u) / 2);
}

/** Chi-square CDF with k degrees of freedom. */
export function chiSquareCdf(x: number, k: number): number {
	if (x <= 0) return 0;
	return gammaP(k / 2, x / 2);
}

/**
 * Chi-square quantile: Wilson–Hilferty start (or the small-x series start in the lower tail),
 * then safeguarded Newton iterations on the regularized incomplete gamma, working on the smaller
 * tail so that probabilities near 1 keep their digits.
 */
export function chiSquareQuantile(q: number, k: number): number {
	if (!(k > 0) || !Number.isFinite(k))
		throw new RangeError(`degrees of freedom must be > 0, got ${k}`);
	if (!(q >= 0 && q <= 1)) throw new RangeError(`probability must be in [0, 1], got ${q}`);
	if (q === 0) return 0;
	if (q === 1) return Infinity;
	const a = k / 2;
	const upper = q > 0.5;
	const target = upper ? 1 - q : q;
	const f = (y: number) => (upper ? gammaQ(a, y) - target : gammaP(a, y) - target);
	// f is increasing in y for the lower tail and decreasing for the upper one.
	const sign = upper ? -1 : 1;
	const logDensity = (y: number) => (a - 1) * Math.log(y) - y - logGamma(a);

	const z = normalQuantile(q);
	const h = 2 / (9 * k);
	let y = (k * Math.pow(1 - h + z * Math.sqrt(h), 3)) / 2;
	// Wilson–Hilferty fails for few degrees of freedom deep in the lower tail, where
	// P(a, y) ≈ y^a / Γ(a + 1) gives the start instead.
	if (!(y > 0) || (!upper && a < 1)) y = Math.exp((Math.log(q) + logGamma(a + 1)) / a);

	let lo = 0;
	let hi = Infinity;
	for (let iter = 0; iter < 200; iter++) {
		const fy = f(y);
		if (sign * fy > 0) hi = y;
		else lo = y;
		if (fy === 0) break;
		const step = (sign * fy) / Math.exp(logDensity(y));
		let next = y - step;
		// Far from the root the density can underflow and throw Newton anywhere: keep it inside
		// the bracket, grow at most geometrically while unbounded, bisect geometrically if wide.
		if (hi === Infinity && next > 2 * y + 1) next = 2 * y + 1;
		if (!(next > lo && next < hi)) {
			if (hi === Infinity) next = 2 * y + 1;
			else next = lo > 0 && hi > 4 * lo ? Math.sqrt(lo * hi) : (lo + hi) / 2;
		}
		if (Math.abs(next - y) <= 1e-15 * Math.max(1, y)) {
			y = next;
			break;
		}
		y = next;
	}
	return 2 * y;
}
