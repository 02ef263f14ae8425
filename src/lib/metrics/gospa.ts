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
	const m = truth.length;
	const n = estimates.length;
	const d2 = new Float64Array(m * n);
	for (let i = 0; i < m; i++) {
		for (let j = 0; j < n; j++)
			d2[i * n + j] = squaredDistance(truth[i], estimates[j], options.weights);
	}
	return gospaFromSquaredDistances(d2, m, n, options.c, options.p);
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
	const cp = Math.pow(c, p);
	const half = p / 2;
	const cost = new Float64Array(m * n);
	for (let k = 0; k < m * n; k++) {
		const s = d2[k];
		if (!(s >= 0)) throw new RangeError('squared distances must be ≥ 0 and not NaN');
		cost[k] = s < c2 ? powHalf(s, half) : cp;
	}

	const truthToEstimate = new Int32Array(m).fill(-1);
	const estimateToTruth = new Int32Array(n).fill(-1);
	for (const [truthIdx, estIdx] of components(d2, m, n, c2)) {
		if (truthIdx.length === 1 && estIdx.length === 1) {
			truthToEstimate[truthIdx[0]] = estIdx[0];
			continue;
		}
		const rows = truthIdx.length;
		const cols = estIdx.length;
		const sub = new Float64Array(rows * cols);
		for (let a = 0; a < rows; a++) {
			const base = truthIdx[a] * n;
			for (let b = 0; b < cols; b++) sub[a * cols + b] = cost[base + estIdx[b]];
		}
		const sol = solveAssignment(sub, rows, cols);
		for (let a = 0; a < rows; a++) {
			const b = sol.rowToCol[a];
			if (b >= 0 && d2[truthIdx[a] * n + estIdx[b]] < c2) truthToEstimate[truthIdx[a]] = estIdx[b];
		}
	}
	const pairs: [number, number][] = [];
	let localization = 0;
	for (let i = 0; i < m; i++) {
		const j = truthToEstimate[i];
		if (j < 0) continue;
		estimateToTruth[j] = i;
		pairs.push([i, j]);
		localization += cost[i * n + j];
	}
	// The optimal full assignment of min(m, n) pairs adds cut-off pairs to these (OSPA counts them).
	const farPairs = Math.min(m, n) - pairs.length;
	const missed = m - pairs.length;
	const falseCount = n - pairs.length;
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
		pairs,
		truthToEstimate,
		estimateToTruth,
		ospa
	};
}

/**
 * Connected components of the graph whose edges are the pairs closer than c, keeping those with
 * both truth and estimates. No pair across components can be assigned below the cut-off, so each
 * component is an assignment problem of its own, and in traffic scenes most are 1×1.
 */
function components(
	d2: ArrayLike<number>,
	m: number,
	n: number,
	c2: number
): [number[], number[]][] {
	const parent = new Int32Array(m + n);
	for (let k = 0; k < m + n; k++) parent[k] = k;
	const find = (k: number): number => {
		while (parent[k] !== k) {
			parent[k] = parent[parent[k]];
			k = parent[k];
		}
		return k;
	};
	for (let i = 0; i < m; i++) {
		for (let j = 0; j < n; j++) {
			if (!(d2[i * n + j] < c2)) continue;
			const a = find(i);
			const b = find(m + j);
			if (a !== b) parent[a] = b;
		}
	}
	const groups = new Map<number, [number[], number[]]>();
	for (let k = 0; k < m + n; k++) {
		const root = find(k);
		let g = groups.get(root);
		if (!g) groups.set(root, (g = [[], []]));
		if (k < m) g[0].push(k);
		else g[1].push(k - m);
	}
	return [...groups.values()].filter(([t, e]) => t.length > 0 && e.length > 0);
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
