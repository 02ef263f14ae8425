import type { Frame } from '../../protocol/types';

/** Per-frame agreement between estimates and truth by nearest neighbour within `gate` metres. */
export interface SetAgreement {
	truthFrames: number;
	covered: number;
	matchedDistanceSum: number;
	falseEstimates: number;
	frames: number;
}

export function emptyAgreement(): SetAgreement {
	return {
		truthFrames: 0,
		covered: 0,
		matchedDistanceSum: 0,
		falseEstimates: 0,
		frames: 0
	};
}

export function accumulate(acc: SetAgreement, frame: Frame, gate: number): void {
	const est = frame.estimates ?? [];
	const truth = frame.truth ?? [];
	acc.frames++;
	for (const t of truth) {
		acc.truthFrames++;
		let best = Infinity;
		for (const e of est) best = Math.min(best, Math.hypot(e.x[0] - t.x[0], e.x[1] - t.x[1]));
		if (best <= gate) {
			acc.covered++;
			acc.matchedDistanceSum += best;
		}
	}
	for (const e of est)
		if (!truth.some((t) => Math.hypot(e.x[0] - t.x[0], e.x[1] - t.x[1]) <= gate))
			acc.falseEstimates++;
}

type Point = readonly number[];

/**
 * GOSPA with α = 2 and p = 1 (Rahmathullah, García-Fernández and Svensson, 2017) by trying every
 * assignment: only for small sets, as a reference independent of the metrics module.
 * With p = 1 it is min over partial assignments of Σ min(d, c) + (c / 2)·(number unassigned).
 */
export function bruteForceGospa(xs: readonly Point[], ys: readonly Point[], c: number): number {
	const [small, large] = xs.length <= ys.length ? [xs, ys] : [ys, xs];
	if (large.length > 8) throw new Error('bruteForceGospa: sets too large to enumerate');
	const used = new Array<boolean>(large.length).fill(false);
	const d = (a: Point, b: Point) => Math.hypot(a[0] - b[0], a[1] - b[1]);
	let best = Infinity;
	const visit = (i: number, cost: number, assigned: number): void => {
		if (cost >= best) return;
		if (i === small.length) {
			best = Math.min(best, cost + (c / 2) * (small.length + large.length - 2 * assigned));
			return;
		}
		visit(i + 1, cost, assigned);
		for (let j = 0; j < large.length; j++) {
			if (used[j]) continue;
			const dij = d(small[i], large[j]);
			if (dij >= c) continue;
			used[j] = true;
			visit(i + 1, cost + dij, assigned + 1);
			used[j] = false;
		}
	};
	visit(0, 0, 0);
	return best;
}

/**
 * The same GOSPA on larger sets: pairs at c or more are never assigned, so the problem splits into the
 * connected groups of points closer than c, each enumerated on its own.
 */
export function clusteredGospa(xs: readonly Point[], ys: readonly Point[], c: number): number {
	const n = xs.length;
	const parent = Array.from({ length: n + ys.length }, (_, i) => i);
	const find = (i: number): number => (parent[i] === i ? i : (parent[i] = find(parent[i])));
	for (let i = 0; i < n; i++)
		for (let j = 0; j < ys.length; j++)
			if (Math.hypot(xs[i][0] - ys[j][0], xs[i][1] - ys[j][1]) < c) parent[find(i)] = find(n + j);
	const groups = new Map<number, { x: Point[]; y: Point[] }>();
	for (let i = 0; i < parent.length; i++) {
		const root = find(i);
		const g = groups.get(root) ?? { x: [], y: [] };
		if (i < n) g.x.push(xs[i]);
		else g.y.push(ys[i - n]);
		groups.set(root, g);
	}
	let total = 0;
	for (const g of groups.values()) total += bruteForceGospa(g.x, g.y, c);
	return total;
}
