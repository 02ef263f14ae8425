/**
 * Downsampling of per-frame metric values into time buckets, exactly as the series endpoint groups them in
 * SQL (bucket = floor((t − from) / width), the last bucket closed): used to check the endpoint and to merge a
 * zoomed-in refinement into the overview the strips already hold.
 */
export interface Buckets {
	/** bucket start times (seconds from run start); empty buckets left out */
	t: number[];
	min: (number | null)[];
	max: (number | null)[];
	mean: (number | null)[];
	frames: number[];
}

export function bucketOf(t: number, from: number, width: number, buckets: number): number {
	return Math.min(Math.floor((t - from) / width), buckets - 1);
}

export function downsample(
	times: ArrayLike<number>,
	values: ArrayLike<number | null>,
	from: number,
	to: number,
	buckets: number
): Buckets {
	const width = (to - from) / buckets;
	const acc = new Map<number, { n: number; k: number; sum: number; min: number; max: number }>();
	for (let i = 0; i < times.length; i++) {
		const t = times[i];
		if (t < from || t > to) continue;
		const b = bucketOf(t, from, width, buckets);
		const a = acc.get(b) ?? { n: 0, k: 0, sum: 0, min: Infinity, max: -Infinity };
		acc.set(b, a);
		a.n++;
		const v = values[i];
		if (v === null) continue;
		a.k++;
		a.sum += v;
		a.min = Math.min(a.min, v);
		a.max = Math.max(a.max, v);
	}
	const out: Buckets = { t: [], min: [], max: [], mean: [], frames: [] };
	for (const b of [...acc.keys()].sort((x, y) => x - y)) {
		const a = acc.get(b)!;
		out.t.push(from + b * width);
		out.frames.push(a.n);
		out.min.push(a.k ? a.min : null);
		out.max.push(a.k ? a.max : null);
		out.mean.push(a.k ? a.sum / a.k : null);
	}
	return out;
}

/** How many buckets a strip of `px` pixels wants: about one per two pixels, never more than the frames. */
export function bucketsFor(px: number, frames: number): number {
	return Math.max(1, Math.min(4000, Math.round(px / 2), frames || 1));
}

/** Whether a zoomed range needs a finer series than the one on hand (coarser than ~2 buckets per 3 px). */
export function needsRefinement(haveWidth: number, from: number, to: number, px: number): boolean {
	return haveWidth > ((to - from) / px) * 1.5;
}
