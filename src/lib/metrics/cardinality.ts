/** Cardinality of a set of estimates with existence probabilities (a multi-Bernoulli set). */

export interface CardinalityStats {
	/** Σ rᵢ */
	mean: number;
	/** Σ rᵢ(1 − rᵢ) */
	variance: number;
	/** P(N = k) for k = 0..n (Poisson-binomial) */
	distribution: Float64Array;
}

/** Existence probability of an estimate; a missing r means the tracker asserts the object exists. */
export function existence(r: number | undefined): number {
	if (r === undefined) return 1;
	if (!(r >= 0 && r <= 1))
		throw new RangeError(`existence probability must be in [0, 1], got ${r}`);
	return r;
}

export function expectedCardinality(estimates: readonly { r?: number }[]): number {
	let s = 0;
	for (const e of estimates) s += existence(e.r);
	return s;
}

/**
 * Exact Poisson-binomial distribution by dynamic programming, O(n²). Each step is a convex
 * combination of non-negative numbers, so there is no cancellation.
 */
export function cardinalityDistribution(r: ArrayLike<number>): Float64Array {
	const n = r.length;
	const p = new Float64Array(n + 1);
	p[0] = 1;
	for (let i = 0; i < n; i++) {
		const ri = existence(r[i]);
		const qi = 1 - ri;
		for (let k = i + 1; k >= 1; k--) p[k] = p[k] * qi + p[k - 1] * ri;
		p[0] *= qi;
	}
	return p;
}

export function cardinalityStats(estimates: readonly { r?: number }[]): CardinalityStats {
	const r = estimates.map((e) => existence(e.r));
	let mean = 0;
	let variance = 0;
	for (const ri of r) {
		mean += ri;
		variance += ri * (1 - ri);
	}
	return { mean, variance, distribution: cardinalityDistribution(r) };
}

export interface CardinalityError {
	/** E[N] − |X| */
	expected: number;
	/** |Y| − |X| */
	count: number;
	/** P(N = |X|) under the multi-Bernoulli cardinality distribution */
	probabilityOfTruth: number;
}

export function cardinalityError(
	estimates: readonly { r?: number }[],
	nTruth: number
): CardinalityError {
	const stats = cardinalityStats(estimates);
	return {
		expected: stats.mean - nTruth,
		count: estimates.length - nTruth,
		probabilityOfTruth: nTruth < stats.distribution.length ? stats.distribution[nTruth] : 0
	};
}
