/**
 * GOSPA (A. S. Rahmathullah, Á. F. García-Fernández, L. Svensson, "Generalized optimal sub-pattern
 * assignment metric", FUSION 2017) with α = 2, and OSPA (D. Schuhmacher, B.-T. Vo, B.-N. Vo,
 * "A consistent metric for performance evaluation of multi-object filters", IEEE TSP 2008).
 *
 * With α = 2 both reduce to one rectangular assignment on the cut-off costs min(d, c)^p
 * (GOSPA paper, Proposition 1): a pair assigned at d ≥ c costs c^p, exactly what one missed plus
 * one false object cost (c^p/2 each), so such pairs are reported as unassigned.
 */
import { solveAssignment } from './assignment';

export type Point = ArrayLike<number>;

export interface GospaOptions {
	/** cut-off c > 0, in the run's length unit */
	c: number;
	/** order p, 1 ≤ p < ∞ */
	p: number;
	/** per-component weights w_k ≥ 0 of d(x, y) = sqrt(Σ w_k (x_k − y_k)²); default all 1 */
	weights?: ArrayLike<number>;
}

export interface GospaResult {
	/** d_p^(c,2)(X, Y) */
	gospa: number;
	/** Σ d^p over assigned pairs (p-th power units) */
	localization: number;
	/** truth objects left unassigned */
	missed: number;
	/** estimates left unassigned (named so because `false` is awkward as a field) */
	falseCount: number;
	/** (truth index, estimate index) for every assigned pair, all with d < c */
	pairs: [number, number][];
	/** estimate index per truth object, or -1 */
	truthToEstimate: Int32Array;
	/** truth index per estimate, or -1 */
	estimateToTruth: Int32Array;
	/** OSPA from the same assignment */
	ospa: OspaResult;
}

export interface OspaResult {
	ospa: number;
	/** localization component ē_loc (length units) */
	localization: number;
	/** cardinality component ē_card (length units); ospa^p = localization^p + cardinality^p */
	cardinality: number;
}

export function checkOrder(c: number, p: number): void {
	if (!(c > 0) || !Number.isFinite(c))
		throw new RangeError(`cut-off c must be finite and > 0, got ${c}`);
	if (!(p >= 1) || !Number.isFinite(p))
		throw new RangeError(`order p must satisfy 1 ≤ p < ∞, got ${p}`);
}

/** Squared (weighted) Euclidean distance between two vectors of the same length. */
export function squaredDistance(a: Point, b: Point, weights?: ArrayLike<number>): number {
	const n = a.length;
	if (b.length !== n) throw new RangeError(`dimension mismatch: ${n} vs ${b.length}`);
	let s = 0;
	for (let k = 0; k < n; k++) {
		const d = a[k] - b[k];
		s += weights ? weights[k] * d * d : d * d;
	}
	return s;
}

/** GOSPA and OSPA between truth X and estimates Y (each a list of equal-length vectors). */
export function gospa(
	truth: readonly Point[],
	estimates: readonly Point[],
	options: GospaOptions
): GospaResult {
	checkOrder(options.c, options.p);
	const dim = truth.length ? truth[0].length : estimates.length ? estimates[0].length : 0;
	for (const q of truth) if (q.length !== dim) throw dimensionMismatch(dim, q.length);
	for (const q of estimates) if (q.length !== dim) throw dimensionMismatch(dim, q.length);
	const m = truth.length;
	const n = estimates.length;
	const pairs = closePairs(flatten(truth, dim), m, flatten(estimates, dim), n, options.c, {
		weights: options.weights
	});
	if (pairs === null) throw new RangeError('squared distances must be ≥ 0 and not NaN');
	return gospaFromClosePairs(pairs, m, n, options.c, options.p);
}

function dimensionMismatch(a: number, b: number): RangeError {
	return new RangeError(`dimension mismatch: ${a} vs ${b}`);
}

function flatten(points: readonly Point[], dim: number): number[] {
	const out: number[] = [];
	for (let i = 0; i < points.length; i++) {
		const q = points[i];
		for (let k = 0; k < dim; k++) out.push(q[k]);
	}
	return out;
}

/**
 * The same from a row-major matrix of squared distances (truth rows, estimate columns). Working on
 * d² avoids a square root per pair for p = 2 and makes "d < c" the exact test "d² < c²".
 */
export function gospaFromSquaredDistances(
	d2: ArrayLike<number>,
	m: number,
	n: number,
	c: number,
	p: number
): GospaResult {
	checkOrder(c, p);
	const c2 = c * c;
	const pairs = new PairList();
	for (let i = 0; i < m; i++) {
		for (let j = 0; j < n; j++) {
			const s = d2[i * n + j];
			if (!(s >= 0)) throw new RangeError('squared distances must be ≥ 0 and not NaN');
			if (s < c2) pairs.push(i, j, s);
		}
	}
	return gospaFromClosePairs(pairs, m, n, c, p);
}

/** The pairs of a truth and an estimate closer than the cut-off, with their squared distances, in no set order. */
export interface ClosePairs {
	count: number;
	truth: ArrayLike<number>;
	estimate: ArrayLike<number>;
	d2: ArrayLike<number>;
}

/** Plain arrays: small ones cost far less to make than typed arrays, and most frames have few pairs. */
class PairList implements ClosePairs {
	count = 0;
	truth: number[] = [];
	estimate: number[] = [];
	d2: number[] = [];

	push(i: number, j: number, s: number): void {
		this.truth.push(i);
		this.estimate.push(j);
		this.d2.push(s);
		this.count++;
	}

	clear(): void {
		this.count = this.truth.length = this.estimate.length = this.d2.length = 0;
	}
}

/**
 * Working memory of gospaFromClosePairs, kept between calls (JavaScript runs one call at a time): making
 * a dozen typed arrays per frame cost more than the whole GOSPA of a frame of ten objects.
 */
const scratch: Int32Array[] = [];
const scratchF: Float64Array[] = [];
let scratchU = new Uint8Array(64);

/** Scratch integers `slot`, at least n of them, contents undefined. */
function ints(slot: number, n: number): Int32Array {
	let a = scratch[slot];
	if (!a || a.length < n) scratch[slot] = a = new Int32Array(Math.max(64, 2 * n));
	return a;
}

function floats(slot: number, n: number): Float64Array {
	let a = scratchF[slot];
	if (!a || a.length < n) scratchF[slot] = a = new Float64Array(Math.max(64, 2 * n));
	return a;
}

function bytes(n: number): Uint8Array {
	if (scratchU.length < n) scratchU = new Uint8Array(2 * n);
	return scratchU;
}

/** below this many truth × estimate pairs every pair is measured; above, a grid finds the near ones */
const GRID_FROM_PAIRS = 4096;
/** grid cells are this much wider than c, so rounding never hides a pair closer than c */
const CELL_MARGIN = 1e-3;
/** cell indices stay far below 2^53, where dividing by the cell size could skip a cell */
const MAX_CELL_INDEX = 2 ** 40;

/**
 * Pairs closer than c between m truth and n estimate points given as flat coordinates of one
 * dimension (point i of a set of dimension dim at [i·dim, (i + 1)·dim)), by the (weighted) Euclidean distance of `squaredDistance`, computed in
 * the same way. Large sets bucket the estimates in a grid of cells of side c over the two most
 * weighted coordinates: a pair closer than c is closer than c in every coordinate, so it lies in
 * the same or a neighbouring cell, and only those are measured. Null when a squared distance is
 * NaN or negative (a NaN coordinate, a negative weight).
 * `grid`: force the grid (true) or every pair (false), for tests; by default by size.
 */
export function closePairs(
	truth: ArrayLike<number>,
	m: number,
	estimates: ArrayLike<number>,
	n: number,
	c: number,
	options: { weights?: ArrayLike<number>; grid?: boolean } = {}
): ClosePairs | null {
	const { weights } = options;
	const dim = m > 0 ? truth.length / m : n > 0 ? estimates.length / n : 0;
	if (!Number.isInteger(dim) || truth.length !== m * dim || estimates.length !== n * dim)
		throw new RangeError('coordinate arrays do not hold whole points of one dimension');
	const c2 = c * c;
	const d2 = (i: number, j: number): number => {
		let s = 0;
		const a = i * dim;
		const b = j * dim;
		for (let k = 0; k < dim; k++) {
			const d = truth[a + k] - estimates[b + k];
			s += weights ? weights[k] * d * d : d * d;
		}
		return s;
	};
	const pairs = new PairList();
	const grid = options.grid ?? m * n > GRID_FROM_PAIRS;
	if (
		grid &&
		dim > 0 &&
		m > 0 &&
		n > 0 &&
		gridPairs(truth, m, estimates, n, dim, c, weights, d2, pairs)
	)
		return pairs;
	pairs.clear();
	if (dim === 2 && !weights) {
		// the common case written out: the same sums as squaredDistance's, in the same order
		for (let i = 0; i < m; i++) {
			const tx = truth[2 * i];
			const ty = truth[2 * i + 1];
			for (let j = 0; j < n; j++) {
				const dx = tx - estimates[2 * j];
				const dy = ty - estimates[2 * j + 1];
				const s = dx * dx + dy * dy;
				if (!(s >= 0)) return null;
				if (s < c2) pairs.push(i, j, s);
			}
		}
		return pairs;
	}
	for (let i = 0; i < m; i++) {
		for (let j = 0; j < n; j++) {
			const s = d2(i, j);
			if (!(s >= 0)) return null;
			if (s < c2) pairs.push(i, j, s);
		}
	}
	return pairs;
}

/** The grid search of closePairs; false when the coordinates do not allow it (non-finite, or too far apart for c). */
function gridPairs(
	truth: ArrayLike<number>,
	m: number,
	estimates: ArrayLike<number>,
	n: number,
	dim: number,
	c: number,
	weights: ArrayLike<number> | undefined,
	d2: (i: number, j: number) => number,
	pairs: PairList
): boolean {
	// the two most weighted coordinates, scaled by √w: √w_k·|x_k − y_k| ≤ d for each k
	let a = -1;
	let b = -1;
	const w = (k: number) => (weights ? weights[k] : 1);
	for (let k = 0; k < dim; k++) {
		const wk = w(k);
		if (!(wk >= 0) || !Number.isFinite(wk)) return false;
		if (a < 0 || wk > w(a)) {
			b = a;
			a = k;
		} else if (b < 0 || wk > w(b)) b = k;
	}
	if (a < 0 || !(w(a) > 0)) return false;
	if (b >= 0 && !(w(b) > 0)) b = -1;
	const sa = Math.sqrt(w(a));
	const sb = b >= 0 ? Math.sqrt(w(b)) : 0;
	let maxAbs = 0;
	for (const set of [truth, estimates]) {
		for (let k = 0; k < set.length; k++) {
			if (!Number.isFinite(set[k])) return false;
			const v = Math.abs(set[k]) * Math.max(sa, sb);
			if (v > maxAbs) maxAbs = v;
		}
	}
	const side = c * (1 + CELL_MARGIN) + 8 * Number.EPSILON * maxAbs;
	if (!(maxAbs / side < MAX_CELL_INDEX)) return false;
	const cellA = (set: ArrayLike<number>, i: number) => Math.floor((sa * set[i * dim + a]) / side);
	const cellB = (set: ArrayLike<number>, i: number) =>
		b < 0 ? 0 : Math.floor((sb * set[i * dim + b]) / side);

	// estimates sorted by cell (A, then B): the estimates of one A column and three B rows are one run
	const ga = new Float64Array(n);
	const gb = new Float64Array(n);
	for (let j = 0; j < n; j++) {
		ga[j] = cellA(estimates, j);
		gb[j] = cellB(estimates, j);
	}
	const order = new Int32Array(n);
	for (let j = 0; j < n; j++) order[j] = j;
	order.sort((p, q) => ga[p] - ga[q] || gb[p] - gb[q]);
	const sa2 = new Float64Array(n);
	const sb2 = new Float64Array(n);
	for (let k = 0; k < n; k++) {
		sa2[k] = ga[order[k]];
		sb2[k] = gb[order[k]];
	}
	const c2 = c * c;
	for (let i = 0; i < m; i++) {
		const ta = cellA(truth, i);
		const tb = cellB(truth, i);
		for (let x = ta - 1; x <= ta + 1; x++) {
			// first sorted estimate at or after cell (x, tb − 1)
			let lo = 0;
			let hi = n;
			while (lo < hi) {
				const mid = (lo + hi) >>> 1;
				if (sa2[mid] < x || (sa2[mid] === x && sb2[mid] < tb - 1)) lo = mid + 1;
				else hi = mid;
			}
			for (let k = lo; k < n && sa2[k] === x && sb2[k] <= tb + 1; k++) {
				const j = order[k];
				const s = d2(i, j);
				if (s < c2) pairs.push(i, j, s);
			}
		}
	}
	return true;
}

/**
 * GOSPA and OSPA from the pairs closer than c alone (any others among `pairs` are ignored). No optimal assignment pairs two objects c or
 * more apart below the cost of leaving both unassigned (c^p/2 each, α = 2), so the objects split
 * into the connected components of the "closer than c" graph, and each component is an assignment
 * problem of its own; in traffic scenes most are 1×1. Only components are ever held as matrices.
 */
export function gospaFromClosePairs(
	pairs: ClosePairs,
	m: number,
	n: number,
	c: number,
	p: number
): GospaResult {
	checkOrder(c, p);
	const c2 = c * c;
	const cp = Math.pow(c, p);
	const half = p / 2;
	const { count } = pairs;

	// components by union-find over truth 0..m−1 and estimates m..m+n−1
	const parent = ints(0, m + n);
	for (let k = 0; k < m + n; k++) parent[k] = k;
	const find = (k: number): number => {
		while (parent[k] !== k) {
			parent[k] = parent[parent[k]];
			k = parent[k];
		}
		return k;
	};
	const near = (e: number) => pairs.d2[e] < c2;
	for (let e = 0; e < count; e++) {
		if (!near(e)) continue;
		const ra = find(pairs.truth[e]);
		const rb = find(m + pairs.estimate[e]);
		if (ra !== rb) parent[ra] = rb;
	}
	// component ids in order of first member; each member's place among its component's truth or estimates
	const compOfRoot = ints(1, m + n).fill(-1, 0, m + n);
	const comp = ints(2, m + n);
	const local = ints(3, m + n);
	const rows: number[] = [];
	const cols: number[] = [];
	for (let k = 0; k < m + n; k++) {
		const r = find(k);
		let id = compOfRoot[r];
		if (id < 0) {
			id = compOfRoot[r] = rows.length;
			rows.push(0);
			cols.push(0);
		}
		comp[k] = id;
		local[k] = k < m ? rows[id]++ : cols[id]++;
	}
	const groups = rows.length;
	// members of each component, ascending, and its pairs, by counting sort
	const truthStart = ints(4, groups + 1);
	const estStart = ints(5, groups + 1);
	const pairStart = ints(6, groups + 1).fill(0, 0, groups + 1);
	truthStart[0] = estStart[0] = 0;
	for (let g = 0; g < groups; g++) {
		truthStart[g + 1] = truthStart[g] + rows[g];
		estStart[g + 1] = estStart[g] + cols[g];
	}
	for (let e = 0; e < count; e++) if (near(e)) pairStart[comp[pairs.truth[e]] + 1]++;
	for (let g = 0; g < groups; g++) pairStart[g + 1] += pairStart[g];
	const truthIdx = ints(7, m);
	const estIdx = ints(8, n);
	for (let k = 0; k < m + n; k++) {
		if (k < m) truthIdx[truthStart[comp[k]] + local[k]] = k;
		else estIdx[estStart[comp[k]] + local[k]] = k - m;
	}
	const byComp = ints(9, pairStart[groups]);
	const fill = ints(10, groups);
	fill.set(pairStart.subarray(0, groups));
	for (let e = 0; e < count; e++) if (near(e)) byComp[fill[comp[pairs.truth[e]]]++] = e;

	const truthToEstimate = new Int32Array(m).fill(-1);
	const estimateToTruth = new Int32Array(n).fill(-1);
	/** d^p of each truth object's pair */
	const pairCost = floats(0, m);
	for (let g = 0; g < groups; g++) {
		const r = rows[g];
		const k = cols[g];
		if (r === 0 || k === 0) continue;
		if (r === 1 && k === 1) {
			const e = byComp[pairStart[g]];
			truthToEstimate[pairs.truth[e]] = pairs.estimate[e];
			pairCost[pairs.truth[e]] = powHalf(pairs.d2[e], half);
			continue;
		}
		// the component's cut-off cost matrix: c^p wherever no pair is closer than c
		const sub = floats(1, r * k)
			.subarray(0, r * k)
			.fill(cp);
		const close = bytes(r * k).fill(0, 0, r * k);
		for (let q = pairStart[g]; q < pairStart[g + 1]; q++) {
			const e = byComp[q];
			const at = local[pairs.truth[e]] * k + local[m + pairs.estimate[e]];
			sub[at] = powHalf(pairs.d2[e], half);
			close[at] = 1;
		}
		const sol = solveAssignment(sub, r, k);
		for (let a = 0; a < r; a++) {
			const b = sol.rowToCol[a];
			if (b < 0 || !close[a * k + b]) continue;
			const i = truthIdx[truthStart[g] + a];
			truthToEstimate[i] = estIdx[estStart[g] + b];
			pairCost[i] = sub[a * k + b];
		}
	}
	const pairList: [number, number][] = [];
	let localization = 0;
	for (let i = 0; i < m; i++) {
		const j = truthToEstimate[i];
		if (j < 0) continue;
		estimateToTruth[j] = i;
		pairList.push([i, j]);
		localization += pairCost[i];
	}
	// The optimal full assignment of min(m, n) pairs adds cut-off pairs to these (OSPA counts them).
	const farPairs = Math.min(m, n) - pairList.length;
	const missed = m - pairList.length;
	const falseCount = n - pairList.length;
	const gospaP = localization + (cp / 2) * (missed + falseCount);

	const big = Math.max(m, n);
	let ospa: OspaResult;
	if (big === 0) {
		ospa = { ospa: 0, localization: 0, cardinality: 0 };
	} else {
		const locP = (localization + cp * farPairs) / big;
		const cardP = (cp * Math.abs(m - n)) / big;
		ospa = {
			ospa: Math.pow(locP + cardP, 1 / p),
			localization: Math.pow(locP, 1 / p),
			cardinality: Math.pow(cardP, 1 / p)
		};
	}
	return {
		gospa: Math.pow(gospaP, 1 / p),
		localization,
		missed,
		falseCount,
		pairs: pairList,
		truthToEstimate,
		estimateToTruth,
		ospa
	};
}

function powHalf(s: number, half: number): number {
	if (half === 1) return s;
	if (half === 0.5) return Math.sqrt(s);
	return Math.pow(s, half);
}

/** OSPA alone; 0 for two empty sets, c when exactly one is empty. */
export function ospa(
	truth: readonly Point[],
	estimates: readonly Point[],
	options: GospaOptions
): OspaResult {
	return gospa(truth, estimates, options).ospa;
}
