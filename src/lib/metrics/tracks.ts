/**
 * Track-level figures, accumulated frame by frame so a long run is summarised in one pass:
 * CLEAR MOT (K. Bernardin, R. Stiefelhagen, "Evaluating multiple object tracking performance:
 * the CLEAR MOT metrics", EURASIP J. Image and Video Processing, 2008), fragmentations,
 * confirmation latency per truth object, and false tracks with their lifetimes.
 */
import type { ObjectId } from '../protocol/types';
import { solveAssignment } from './assignment';

export interface TrackObject {
	id?: ObjectId;
	/** position (or whatever vector distances are taken on), in the run's length unit */
	pos: ArrayLike<number>;
}

export interface TrackFrame {
	/** seconds */
	t: number;
	truth: readonly TrackObject[];
	estimates: readonly TrackObject[];
}

export interface TrackFigures {
	threshold: number;
	frames: number;
	/** Σ g_t, truth objects over all frames */
	truthCount: number;
	matches: number;
	misses: number;
	falsePositives: number;
	/** mismatches in CLEAR MOT terms */
	idSwitches: number;
	/** times a truth object's tracking resumed after an interruption while it stayed present */
	fragmentations: number;
	/** 1 − (misses + false positives + ID switches) / Σ g_t; null without truth */
	mota: number | null;
	/** mean distance of matched pairs (length unit); null without matches */
	motp: number | null;
	truthObjects: number;
	confirmed: number;
	/** seconds from a truth object's first appearance to its first match */
	confirmationLatency: { mean: number; max: number } | null;
	/** latency per truth id (seconds), null if never matched */
	latencyByTruth: Record<string, number | null>;
	/** estimate ids never matched to any truth object, with how long they lived */
	falseTracks: { count: number; meanLifetime: number | null; maxLifetime: number | null };
	/** false when some objects came without ids, so switches and track figures are lower bounds */
	idsComplete: boolean;
}

/** Centre-distance gate for a match: 2 m suits car-sized objects (common practice). */
export const DEFAULT_MOT_THRESHOLD = 2;

interface TruthState {
	firstSeen: number;
	firstMatched: number | null;
	lastEstimate: string | null;
	tracked: boolean;
	interrupted: boolean;
}

interface EstimateState {
	first: number;
	last: number;
	matched: boolean;
}

const keyOf = (id: ObjectId | undefined): string | null => (id === undefined ? null : String(id));

function distance(a: ArrayLike<number>, b: ArrayLike<number>): number {
	let s = 0;
	for (let k = 0; k < a.length; k++) {
		const d = a[k] - b[k];
		s += d * d;
	}
	return Math.sqrt(s);
}

export class TrackAccumulator {
	readonly threshold: number;
	#frames = 0;
	#truthCount = 0;
	#matches = 0;
	#misses = 0;
	#falsePositives = 0;
	#idSwitches = 0;
	#fragmentations = 0;
	#distanceSum = 0;
	#idsComplete = true;
	#truth = new Map<string, TruthState>();
	#estimates = new Map<string, EstimateState>();
	/** truth id → estimate id matched in the previous frame (the paper's M_{t−1}) */
	#previous = new Map<string, string>();

	constructor(threshold = DEFAULT_MOT_THRESHOLD) {
		if (!(threshold > 0)) throw new RangeError(`threshold must be > 0, got ${threshold}`);
		this.threshold = threshold;
	}

	add(frame: TrackFrame): void {
		const { truth, estimates, t } = frame;
		const m = truth.length;
		const n = estimates.length;
		this.#frames++;
		this.#truthCount += m;

		const truthKeys = this.#uniqueKeys(truth);
		const estKeys = this.#uniqueKeys(estimates);
		const estIndex = new Map<string, number>();
		estKeys.forEach((k, j) => k !== null && estIndex.set(k, j));
		const truthToEst = new Int32Array(m).fill(-1);
		const estTaken = new Uint8Array(n);
		const dist = new Float64Array(m);

		// Step 1: keep last frame's correspondences that are still within the threshold.
		for (let i = 0; i < m; i++) {
			const tk = truthKeys[i];
			const ek = tk === null ? undefined : this.#previous.get(tk);
			const j = ek === undefined ? undefined : estIndex.get(ek);
			if (j === undefined || estTaken[j]) continue;
			const d = distance(truth[i].pos, estimates[j].pos);
			if (d <= this.threshold) {
				truthToEst[i] = j;
				estTaken[j] = 1;
				dist[i] = d;
			}
		}

		// Step 2: the rest by minimum total distance among pairs within the threshold. A gated-out
		// pair costs more than any set of admissible pairs, so the count of matches comes first.
		const freeT: number[] = [];
		const freeE: number[] = [];
		for (let i = 0; i < m; i++) if (truthToEst[i] < 0) freeT.push(i);
		for (let j = 0; j < n; j++) if (!estTaken[j]) freeE.push(j);
		if (freeT.length > 0 && freeE.length > 0) {
			const rows = freeT.length;
			const cols = freeE.length;
			const big = this.threshold * (Math.min(rows, cols) + 1);
			const cost = new Float64Array(rows * cols);
			const d = new Float64Array(rows * cols);
			for (let a = 0; a < rows; a++) {
				for (let b = 0; b < cols; b++) {
					const v = distance(truth[freeT[a]].pos, estimates[freeE[b]].pos);
					d[a * cols + b] = v;
					cost[a * cols + b] = v <= this.threshold ? v : big;
				}
			}
			const sol = solveAssignment(cost, rows, cols);
			for (let a = 0; a < rows; a++) {
				const b = sol.rowToCol[a];
				if (b < 0 || !(d[a * cols + b] <= this.threshold)) continue;
				const i = freeT[a];
				const j = freeE[b];
				truthToEst[i] = j;
				estTaken[j] = 1;
				dist[i] = d[a * cols + b];
				const tk = truthKeys[i];
				const last = tk === null ? null : (this.#truth.get(tk)?.lastEstimate ?? null);
				if (last !== null && last !== estKeys[j]) this.#idSwitches++;
			}
		}

		const next = new Map<string, string>();
		let matched = 0;
		for (let i = 0; i < m; i++) {
			const j = truthToEst[i];
			const tk = truthKeys[i];
			let state: TruthState | undefined;
			if (tk !== null) {
				state = this.#truth.get(tk);
				if (!state) {
					state = {
						firstSeen: t,
						firstMatched: null,
						lastEstimate: null,
						tracked: false,
						interrupted: false
					};
					this.#truth.set(tk, state);
				}
			}
			if (j < 0) {
				if (state?.tracked) {
					state.tracked = false;
					state.interrupted = true;
				}
				continue;
			}
			matched++;
			this.#distanceSum += dist[i];
			if (!state) continue;
			if (state.interrupted) this.#fragmentations++;
			state.interrupted = false;
			state.tracked = true;
			state.firstMatched ??= t;
			const ek = estKeys[j];
			state.lastEstimate = ek;
			if (tk !== null && ek !== null) next.set(tk, ek);
		}
		this.#previous = next;
		this.#matches += matched;
		this.#misses += m - matched;
		this.#falsePositives += n - matched;

		for (let j = 0; j < n; j++) {
			const ek = estKeys[j];
			if (ek === null) continue;
			const s = this.#estimates.get(ek);
			if (s) {
				s.last = t;
				if (estTaken[j]) s.matched = true;
			} else {
				this.#estimates.set(ek, { first: t, last: t, matched: estTaken[j] === 1 });
			}
		}
	}

	/** Keys per object; an object with no id, or sharing its id in this frame, gets none. */
	#uniqueKeys(objects: readonly TrackObject[]): (string | null)[] {
		const keys = objects.map((o) => keyOf(o.id));
		const seen = new Map<string, number>();
		for (const k of keys) if (k !== null) seen.set(k, (seen.get(k) ?? 0) + 1);
		return keys.map((k) => {
			if (k === null || (seen.get(k) ?? 0) > 1) {
				this.#idsComplete = false;
				return null;
			}
			return k;
		});
	}

	result(): TrackFigures {
		const latencyByTruth: Record<string, number | null> = {};
		let latencySum = 0;
		let latencyMax = 0;
		let confirmed = 0;
		for (const [k, s] of this.#truth) {
			const latency = s.firstMatched === null ? null : s.firstMatched - s.firstSeen;
			latencyByTruth[k] = latency;
			if (latency !== null) {
				confirmed++;
				latencySum += latency;
				latencyMax = Math.max(latencyMax, latency);
			}
		}
		let falseCount = 0;
		let lifeSum = 0;
		let lifeMax = 0;
		for (const s of this.#estimates.values()) {
			if (s.matched) continue;
			falseCount++;
			lifeSum += s.last - s.first;
			lifeMax = Math.max(lifeMax, s.last - s.first);
		}
		const g = this.#truthCount;
		return {
			threshold: this.threshold,
			frames: this.#frames,
			truthCount: g,
			matches: this.#matches,
			misses: this.#misses,
			falsePositives: this.#falsePositives,
			idSwitches: this.#idSwitches,
			fragmentations: this.#fragmentations,
			mota: g > 0 ? 1 - (this.#misses + this.#falsePositives + this.#idSwitches) / g : null,
			motp: this.#matches > 0 ? this.#distanceSum / this.#matches : null,
			truthObjects: this.#truth.size,
			confirmed,
			confirmationLatency: confirmed > 0 ? { mean: latencySum / confirmed, max: latencyMax } : null,
			latencyByTruth,
			falseTracks: {
				count: falseCount,
				meanLifetime: falseCount > 0 ? lifeSum / falseCount : null,
				maxLifetime: falseCount > 0 ? lifeMax : null
			},
			idsComplete: this.#idsComplete
		};
	}
}
