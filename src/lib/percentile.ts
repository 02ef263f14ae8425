/**
 * The project's one percentile definition, used by every benchmark and by the live latency meters:
 * the **nearest-rank method**. The p-th percentile (0 < p ≤ 100) of n values is the value at ordinal
 * rank ⌈p/100 · n⌉ of the values in ascending order; p = 0 gives the smallest. The answer is always
 * one of the values, never an interpolation between two.
 */

/** Nearest-rank percentile of values already sorted ascending; NaN when there are none. */
export function percentileOfSorted(sorted: ArrayLike<number>, p: number): number {
	if (!(p >= 0 && p <= 100)) throw new RangeError(`percentile must be 0..100, got ${p}`);
	const n = sorted.length;
	if (n === 0) return NaN;
	const rank = Math.max(1, Math.ceil((p / 100) * n));
	return sorted[Math.min(n, rank) - 1];
}

/** Nearest-rank percentile of values in any order (they are copied, not sorted in place). */
export function percentile(values: ArrayLike<number>, p: number): number {
	return percentileOfSorted(Float64Array.from(values).sort(), p);
}
