/** Run summary, accumulated frame by frame in constant memory per frame (track maps aside). */
import type { Frame } from '../protocol/types';
import { neesBounds, neesVerdict, type NeesVerdict } from './consistency';
import {
	evaluateFrame,
	neesDimension,
	stateLayout,
	type FrameContext,
	type FrameMetrics,
	type StateLayout
} from './frame';
import { DEFAULT_MOT_THRESHOLD, TrackAccumulator, type TrackFigures } from './tracks';

export interface MeanStats {
	frames: number;
	mean: number;
	rms: number;
	max: number;
}

export interface RunSummary {
	frames: number;
	framesWithTruth: number;
	settings: { c: number; p: number; distance: string; motThreshold: number };
	gospa:
		| (MeanStats & {
				localizationMean: number;
				missedTotal: number;
				falseTotal: number;
				missedMean: number;
				falseMean: number;
		  })
		| null;
	ospa: MeanStats | null;
	cardinality: {
		frames: number;
		truthMean: number;
		estimatesMean: number;
		expectedMean: number;
		/** E[N] − |X|, mean over frames with truth and estimates */
		errorMean: number;
		errorRms: number;
	} | null;
	nees: {
		samples: number;
		dim: number;
		mean: number;
		lower: number;
		upper: number;
		verdict: NeesVerdict;
	} | null;
	zones: Record<string, MeanStats>;
	/** null when no frame with truth was fed through add() */
	tracks: TrackFigures | null;
}

class Moments {
	n = 0;
	sum = 0;
	sumSq = 0;
	max = -Infinity;
	push(x: number): void {
		this.n++;
		this.sum += x;
		this.sumSq += x * x;
		if (x > this.max) this.max = x;
	}
	stats(): MeanStats | null {
		if (this.n === 0) return null;
		return {
			frames: this.n,
			mean: this.sum / this.n,
			rms: Math.sqrt(this.sumSq / this.n),
			max: this.max
		};
	}
}

export class RunSummaryAccumulator {
	readonly #ctx: FrameContext;
	readonly #layout: StateLayout;
	readonly #tracks: TrackAccumulator;
	#tracksFed = false;
	#frames = 0;
	#framesWithTruth = 0;
	#gospa = new Moments();
	#ospa = new Moments();
	#localization = 0;
	#missed = 0;
	#false = 0;
	#cardFrames = 0;
	#truthSum = 0;
	#estSum = 0;
	#expectedSum = 0;
	#cardError = new Moments();
	#neesSum = 0;
	#neesCount = 0;
	#zones = new Map<string, Moments>();

	constructor(ctx: FrameContext) {
		this.#ctx = ctx;
		this.#layout = stateLayout(ctx.stateFields);
		this.#tracks = new TrackAccumulator(ctx.settings.motThreshold ?? DEFAULT_MOT_THRESHOLD);
	}

	/** Evaluate a frame, fold it in (track figures included) and return its metrics. */
	add(frame: Frame): FrameMetrics {
		const { metrics } = evaluateFrame(frame, this.#ctx, this.#layout);
		this.addMetrics(metrics);
		if (frame.truth && frame.estimates) {
			const { ix, iy } = this.#layout;
			this.#tracks.add({
				t: frame.t,
				truth: frame.truth.map((o) => ({ id: o.id, pos: [o.x[ix], o.x[iy]] })),
				estimates: frame.estimates.map((o) => ({ id: o.id, pos: [o.x[ix], o.x[iy]] }))
			});
			this.#tracksFed = true;
		}
		return metrics;
	}

	/** Fold in metrics already computed (say, stored rows); track figures need add() instead. */
	addMetrics(m: FrameMetrics): void {
		this.#frames++;
		if (m.n_truth !== null) this.#framesWithTruth++;
		if (m.gospa !== null) {
			this.#gospa.push(m.gospa);
			this.#localization += m.gospa_localization ?? 0;
			this.#missed += m.gospa_missed ?? 0;
			this.#false += m.gospa_false ?? 0;
		}
		if (m.ospa !== null) this.#ospa.push(m.ospa);
		if (m.n_truth !== null && m.n_estimates !== null && m.expected_cardinality !== null) {
			this.#cardFrames++;
			this.#truthSum += m.n_truth;
			this.#estSum += m.n_estimates;
			this.#expectedSum += m.expected_cardinality;
			this.#cardError.push(m.expected_cardinality - m.n_truth);
		}
		if (m.nees_mean !== null && m.nees_count > 0) {
			this.#neesSum += m.nees_mean * m.nees_count;
			this.#neesCount += m.nees_count;
		}
		for (const [name, value] of Object.entries(m.zones)) {
			let z = this.#zones.get(name);
			if (!z) this.#zones.set(name, (z = new Moments()));
			z.push(value);
		}
	}

	result(): RunSummary {
		const { settings } = this.#ctx;
		const g = this.#gospa.stats();
		const n = this.#gospa.n;
		const err = this.#cardError.stats();
		const dim = neesDimension(this.#ctx);
		let nees: RunSummary['nees'] = null;
		if (this.#neesCount > 0) {
			const mean = this.#neesSum / this.#neesCount;
			const bounds = neesBounds(this.#neesCount, dim);
			nees = {
				samples: this.#neesCount,
				dim,
				mean,
				...bounds,
				verdict: neesVerdict(mean, this.#neesCount, dim)
			};
		}
		const zones: Record<string, MeanStats> = {};
		for (const [name, z] of this.#zones) {
			const s = z.stats();
			if (s) zones[name] = s;
		}
		return {
			frames: this.#frames,
			framesWithTruth: this.#framesWithTruth,
			settings: {
				c: settings.c,
				p: settings.p,
				distance: settings.distance,
				motThreshold: settings.motThreshold ?? DEFAULT_MOT_THRESHOLD
			},
			gospa: g && {
				...g,
				localizationMean: this.#localization / n,
				missedTotal: this.#missed,
				falseTotal: this.#false,
				missedMean: this.#missed / n,
				falseMean: this.#false / n
			},
			ospa: this.#ospa.stats(),
			cardinality: err && {
				frames: this.#cardFrames,
				truthMean: this.#truthSum / this.#cardFrames,
				estimatesMean: this.#estSum / this.#cardFrames,
				expectedMean: this.#expectedSum / this.#cardFrames,
				errorMean: err.mean,
				errorRms: err.rms
			},
			nees,
			zones,
			tracks: this.#tracksFed ? this.#tracks.result() : null
		};
	}
}
