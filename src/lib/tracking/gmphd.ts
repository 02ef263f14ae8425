/**
 * Gaussian-mixture PHD filter (B.-N. Vo and W.-K. Ma, "The Gaussian mixture probability hypothesis
 * density filter", IEEE Trans. Signal Processing 54(11), 2006) for a 2-D constant-velocity state
 * [x, y, vx, vy] observed in position [x, y].
 *
 * Labels are not part of the PHD: each component carries a tag that survives prediction and update,
 * births get fresh tags and a merge keeps the tag of its heaviest member.
 */
import {
	add,
	cholesky,
	cholSolve,
	mahalanobis2Chol,
	mul,
	mulT,
	symmetrize,
	zeros,
	type Mat
} from './linalg';
import { cvProcessNoise, cvTransition } from './motion';

export const NX = 4;
export const NZ = 2;

export interface GaussianComponent {
	w: number;
	/** mean, length 4 */
	m: Float64Array;
	/** covariance, row-major 4×4; shared between components and never mutated in place */
	P: Float64Array;
	tag: number;
}

export interface BirthComponent {
	w: number;
	m: ArrayLike<number>;
	P: ArrayLike<number>;
}

export interface PhdEstimate {
	id: number;
	x: number[];
	P: number[];
	r: number;
}

export interface MixtureComponent {
	w: number;
	m: number[];
	P: number[];
	tag: number;
}

export interface GmPhdOptions {
	/** frame period, seconds */
	dt: number;
	/** white-noise acceleration spectral density, m²/s³ */
	processNoise: number;
	/** measurement noise covariance, row-major 2×2 */
	R: ArrayLike<number>;
	/** survival probability p_S used when predict() gets no state-dependent one */
	survival?: number;
	/** T in the paper: components lighter than this are dropped */
	pruneThreshold?: number;
	/** U in the paper: squared Mahalanobis radius for merging */
	mergeThreshold?: number;
	/** J_max in the paper */
	maxComponents?: number;
	/** components heavier than this are reported as estimates */
	extractThreshold?: number;
	/** starting intensity, e.g. a known object */
	initial?: readonly BirthComponent[];
}

export type StateFn = (m: Float64Array) => number;
export type MeasurementFn = (z: readonly number[]) => number;

const LOG_2PI = Math.log(2 * Math.PI);

export class GmPhdFilter {
	readonly dt: number;
	readonly F: Mat;
	readonly Q: Mat;
	readonly R: Mat;
	readonly ps: number;
	readonly pruneThreshold: number;
	readonly mergeThreshold: number;
	readonly maxComponents: number;
	readonly extractThreshold: number;

	#components: GaussianComponent[] = [];
	#nextTag = 1;
	#nextId = 1;
	#idOfTag = new Map<number, number>();
	#tmpA = zeros(NX);

	constructor(opts: GmPhdOptions) {
		this.dt = opts.dt;
		this.F = cvTransition(opts.dt);
		this.Q = cvProcessNoise(opts.dt, opts.processNoise);
		this.R = Float64Array.from(opts.R);
		this.ps = opts.survival ?? 0.99;
		this.pruneThreshold = opts.pruneThreshold ?? 1e-5;
		this.mergeThreshold = opts.mergeThreshold ?? 4;
		this.maxComponents = opts.maxComponents ?? 100;
		this.extractThreshold = opts.extractThreshold ?? 0.5;
		for (const b of opts.initial ?? []) this.#components.push(this.#newComponent(b));
	}

	#newComponent(b: BirthComponent): GaussianComponent {
		return {
			w: b.w,
			m: Float64Array.from(b.m),
			P: Float64Array.from(b.P),
			tag: this.#nextTag++
		};
	}

	/** Σ weights: the expected number of objects. */
	get expectedCardinality(): number {
		let s = 0;
		for (const c of this.#components) s += c.w;
		return s;
	}

	get componentCount(): number {
		return this.#components.length;
	}

	/** The full intensity, copied, heaviest first. */
	mixture(): MixtureComponent[] {
		return [...this.#components]
			.sort((a, b) => b.w - a.w)
			.map((c) => ({
				w: c.w,
				m: Array.from(c.m),
				P: Array.from(c.P),
				tag: c.tag
			}));
	}

	/** Prediction: survivors move by the CV model, then the birth components are appended. */
	predict(births: readonly BirthComponent[] = [], survival?: StateFn): void {
		const FP = this.#tmpA;
		const out: GaussianComponent[] = [];
		for (const c of this.#components) {
			const w = c.w * (survival ? survival(c.m) : this.ps);
			if (w < this.pruneThreshold) continue;
			const m = new Float64Array(NX);
			m[0] = c.m[0] + this.dt * c.m[2];
			m[1] = c.m[1] + this.dt * c.m[3];
			m[2] = c.m[2];
			m[3] = c.m[3];
			mul(this.F, c.P, NX, NX, NX, FP);
			const P = mulT(FP, this.F, NX, NX, NX);
			add(P, this.Q, P);
			out.push({ w, m, P, tag: c.tag });
		}
		for (const b of births) out.push(this.#newComponent(b));
		this.#components = out;
	}

	/**
	 * Update with one scan. `detection` is p_D at a component's mean (default 1); `clutter` is the
	 * clutter intensity κ(z) (default 0).
	 */
	update(Z: readonly (readonly number[])[], detection?: StateFn, clutter?: MeasurementFn): void {
		const comps = this.#components;
		const J = comps.length;
		const etaX = new Float64Array(J);
		const etaY = new Float64Array(J);
		const sInv = new Float64Array(J * 3);
		const logNorm = new Float64Array(J);
		const gains: Float64Array[] = [];
		const posterior: Float64Array[] = [];
		const pd = new Float64Array(J);
		const next: GaussianComponent[] = [];

		const S = zeros(NZ);
		const HP = zeros(NZ, NX);
		const KT = zeros(NZ, NX);
		const L = zeros(NZ);
		for (let j = 0; j < J; j++) {
			const { m, P } = comps[j];
			etaX[j] = m[0];
			etaY[j] = m[1];
			S[0] = P[0] + this.R[0];
			S[1] = P[1] + this.R[1];
			S[2] = P[4] + this.R[2];
			S[3] = P[5] + this.R[3];
			// H = [I 0], so H·P is the first two rows of P.
			HP.set(P.subarray(0, 2 * NX));
			if (!cholesky(S, NZ, L))
				throw new Error('GM-PHD: innovation covariance is not positive definite');
			cholSolve(L, HP, NZ, NX, KT);
			const K = new Float64Array(NX * NZ);
			for (let r = 0; r < NX; r++) for (let c = 0; c < NZ; c++) K[r * NZ + c] = KT[c * NX + r];
			gains.push(K);
			// P⁺ = P − K·H·P
			const Pu = Float64Array.from(P);
			for (let r = 0; r < NX; r++)
				for (let c = 0; c < NX; c++)
					Pu[r * NX + c] -= K[r * NZ] * HP[c] + K[r * NZ + 1] * HP[NX + c];
			posterior.push(symmetrize(Pu, NX));
			const det = S[0] * S[3] - S[1] * S[2];
			sInv[3 * j] = S[3] / det;
			sInv[3 * j + 1] = -S[1] / det;
			sInv[3 * j + 2] = S[0] / det;
			logNorm[j] = -LOG_2PI - 0.5 * Math.log(det);
			pd[j] = detection ? detection(m) : 1;
			const wMiss = (1 - pd[j]) * comps[j].w;
			if (wMiss >= this.pruneThreshold) next.push({ w: wMiss, m, P, tag: comps[j].tag });
		}

		const terms = new Float64Array(J);
		for (const z of Z) {
			let sum = 0;
			for (let j = 0; j < J; j++) {
				const dx = z[0] - etaX[j];
				const dy = z[1] - etaY[j];
				const d2 =
					sInv[3 * j] * dx * dx + 2 * sInv[3 * j + 1] * dx * dy + sInv[3 * j + 2] * dy * dy;
				const t = pd[j] * comps[j].w * Math.exp(logNorm[j] - 0.5 * d2);
				terms[j] = t;
				sum += t;
			}
			const denom = (clutter ? clutter(z) : 0) + sum;
			if (!(denom > 0)) continue;
			for (let j = 0; j < J; j++) {
				const w = terms[j] / denom;
				if (w < this.pruneThreshold) continue;
				const c = comps[j];
				const K = gains[j];
				const dx = z[0] - etaX[j];
				const dy = z[1] - etaY[j];
				const m = new Float64Array(NX);
				for (let r = 0; r < NX; r++) m[r] = c.m[r] + K[r * NZ] * dx + K[r * NZ + 1] * dy;
				next.push({ w, m, P: posterior[j], tag: c.tag });
			}
		}
		this.#components = this.#mergeAndCap(next);
	}

	/** Merging and capping of Vo & Ma's pruning step (the threshold was applied while building). */
	#mergeAndCap(comps: GaussianComponent[]): GaussianComponent[] {
		comps.sort((a, b) => b.w - a.w);
		const chol = new Map<Float64Array, Float64Array>();
		for (const c of comps) {
			if (chol.has(c.P)) continue;
			const L = cholesky(c.P, NX);
			if (!L) throw new Error('GM-PHD: component covariance is not positive definite');
			chol.set(c.P, L);
		}
		const used = new Uint8Array(comps.length);
		const out: GaussianComponent[] = [];
		const d = new Float64Array(NX);
		const y = new Float64Array(NX);
		const members: number[] = [];
		for (let i = 0; i < comps.length && out.length < this.maxComponents; i++) {
			if (used[i]) continue;
			const head = comps[i];
			members.length = 0;
			for (let l = i; l < comps.length; l++) {
				if (used[l]) continue;
				const c = comps[l];
				for (let r = 0; r < NX; r++) d[r] = c.m[r] - head.m[r];
				if (mahalanobis2Chol(chol.get(c.P) as Float64Array, d, NX, y) <= this.mergeThreshold) {
					members.push(l);
					used[l] = 1;
				}
			}
			if (members.length === 1) {
				out.push(head);
				continue;
			}
			let w = 0;
			const m = new Float64Array(NX);
			for (const l of members) {
				w += comps[l].w;
				for (let r = 0; r < NX; r++) m[r] += comps[l].w * comps[l].m[r];
			}
			for (let r = 0; r < NX; r++) m[r] /= w;
			const P = new Float64Array(NX * NX);
			for (const l of members) {
				const c = comps[l];
				for (let r = 0; r < NX; r++) d[r] = m[r] - c.m[r];
				for (let r = 0; r < NX; r++)
					for (let s = 0; s < NX; s++) P[r * NX + s] += c.w * (c.P[r * NX + s] + d[r] * d[s]);
			}
			for (let k = 0; k < P.length; k++) P[k] /= w;
			out.push({ w, m, P: symmetrize(P, NX), tag: head.tag });
		}
		return out;
	}

	/**
	 * State extraction: round(w) copies of every component heavier than the threshold. A tag seen twice
	 * in one scan is split: the lighter component takes a fresh tag, so ids stay unique per frame.
	 */
	estimates(): PhdEstimate[] {
		const heavy = this.#components
			.filter((c) => c.w > this.extractThreshold)
			.sort((a, b) => b.w - a.w);
		const seen = new Set<number>();
		const out: PhdEstimate[] = [];
		for (const c of heavy) {
			if (seen.has(c.tag)) c.tag = this.#nextTag++;
			seen.add(c.tag);
			const copies = Math.max(1, Math.round(c.w));
			const x = Array.from(c.m);
			const P = Array.from(c.P);
			const r = Math.min(1, Math.max(0, c.w));
			for (let k = 0; k < copies; k++) {
				const id = k === 0 ? this.#publicId(c.tag) : this.#nextId++;
				out.push({ id, x: k === 0 ? x : [...x], P: k === 0 ? P : [...P], r });
			}
		}
		return out;
	}

	#publicId(tag: number): number {
		let id = this.#idOfTag.get(tag);
		if (id === undefined) {
			id = this.#nextId++;
			this.#idOfTag.set(tag, id);
		}
		return id;
	}
}
