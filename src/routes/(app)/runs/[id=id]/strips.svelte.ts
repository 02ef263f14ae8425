/**
 * The strips' data: the run's metric series downsampled on the server, refetched finer when the strips are
 * zoomed in, and the GOSPA spikes the timeline marks.
 */
import type { RunSeries, SeriesColumn, SeriesResponse } from '$lib/api-types';
import { neesBounds, type MetricSettings } from '$lib/metrics';
import { setColors, withAlpha } from '$lib/set-colors';
import { bucketsFor, needsRefinement } from '$lib/viewer/series';

export interface StripSpec {
	id: string;
	title: string;
	unit: string;
	lines: {
		label: string;
		values: (number | null)[];
		color: string;
		fill?: string;
		dash?: number[];
	}[];
	/** pairs of line indexes to shade between */
	bands?: [number, number, string][];
}

/** how often the strips of a followed live run are fetched again as it grows */
const GROW_MS = 2000;

export class StripsState {
	series = $state.raw<RunSeries | null>(null);
	overview = $state.raw<RunSeries | null>(null);
	range = $state<[number, number] | null>(null);
	error = $state<string | null>(null);

	#abort: AbortController | null = null;
	#growTimer: ReturnType<typeof setTimeout> | null = null;
	#grownAt = 0;

	constructor(
		private runId: string,
		private duration: number,
		private frames: number,
		private settings: MetricSettings,
		private dim: number
	) {}

	/**
	 * A live run grew to `duration` (about `frames` frames): the whole-run series is fetched again, at most
	 * every GROW_MS, unless the strips are zoomed in (the person's view stays).
	 */
	grow(duration: number, frames: number, px: number) {
		if (!(duration > this.duration)) return;
		this.duration = duration;
		// no frame count known yet (a run that had no frames): as many buckets as the strips can show
		this.frames = Math.max(this.frames, frames || Math.round(px / 2));
		if (this.#growTimer !== null) return;
		const wait = Math.max(0, this.#grownAt + GROW_MS - Date.now());
		this.#growTimer = setTimeout(() => {
			this.#growTimer = null;
			this.#grownAt = Date.now();
			if (!this.range) void this.load(0, this.duration, px);
		}, wait);
	}

	async load(from: number, to: number, px: number) {
		this.#abort?.abort();
		const abort = (this.#abort = new AbortController());
		const buckets = bucketsFor(
			px,
			Math.ceil((this.frames * (to - from)) / Math.max(this.duration, 1e-9))
		);
		try {
			const res = await fetch(
				`/api/runs/${this.runId}/series?from=${from}&to=${to}&buckets=${buckets}`,
				{ signal: abort.signal }
			);
			if (!res.ok) throw new Error(`series: HTTP ${res.status}`);
			const body = (await res.json()) as SeriesResponse;
			this.series = body.series;
			if (!this.range) this.overview = body.series;
			this.error = null;
		} catch (err) {
			if ((err as Error).name !== 'AbortError') this.error = 'Strips could not load';
		}
	}

	/** zooms the strips to [from, to]; fetches a finer series when the one on hand is too coarse */
	zoom(from: number, to: number, px: number) {
		const full = from <= 0 && to >= this.duration;
		this.range = full ? null : [from, to];
		if (full && this.overview) this.series = this.overview;
		else if (!this.series || needsRefinement(this.series.width, from, to, px))
			void this.load(from, to, px);
	}

	/** bucket starts where GOSPA jumps well above its run level (mean + 2 sd of the bucket maxima) */
	readonly spikes = $derived.by(() => {
		const s = this.overview;
		if (!s) return [];
		const g = s.columns.gospa?.max ?? [];
		const vals = g.filter((v): v is number => v !== null);
		if (vals.length < 3) return [];
		const mean = vals.reduce((a, b) => a + b, 0) / vals.length;
		const sd = Math.sqrt(vals.reduce((a, b) => a + (b - mean) ** 2, 0) / vals.length);
		const out: number[] = [];
		g.forEach((v, i) => {
			if (v !== null && v > mean + 2 * sd && (i === 0 || (g[i - 1] ?? 0) <= mean + 2 * sd))
				out.push(s.t[i]);
		});
		return out;
	});

	readonly strips = $derived.by((): StripSpec[] => {
		const s = this.series;
		if (!s) return [];
		const col = (c: SeriesColumn) => s.columns[c];
		const { c, p } = this.settings;
		const half = c ** p / 2;
		const loc = col('gospa_localization').mean;
		const missed = col('gospa_missed').mean.map((v) => (v === null ? null : v * half));
		const falses = col('gospa_false').mean.map((v) => (v === null ? null : v * half));
		const sum = (...a: (number | null)[][]) =>
			a[0].map((_, i) =>
				a.some((x) => x[i] === null) ? null : a.reduce((acc, x) => acc + (x[i] as number), 0)
			);
		const b = neesBounds(1, this.dim);
		const spread = (k: number) => {
			const mean = col('expected_cardinality').mean;
			const sd = col('cardinality_sd').mean;
			return mean.map((m, i) => (m === null ? null : Math.max(0, m + k * (sd[i] ?? 0))));
		};
		const unitP = p === 1 ? 'm' : `m^${p}`;
		const zoneColors = [setColors.zone, setColors.estimate, setColors.measurement, setColors.truth];
		return [
			{
				id: 'cardinality',
				title: 'Cardinality',
				unit: 'objects',
				lines: [
					{ label: 'truth', values: col('n_truth').mean, color: setColors.truth },
					{ label: 'estimates', values: col('n_estimates').mean, color: setColors.estimate },
					{
						label: 'E[N]',
						values: col('expected_cardinality').mean,
						color: setColors.estimate,
						dash: [4, 3]
					},
					// the cardinality distribution as a band: E[N] ± 2σ, σ² = Σ r(1 − r)
					{ label: 'E[N] − 2σ', values: spread(-2), color: 'transparent' },
					{ label: 'E[N] + 2σ', values: spread(2), color: 'transparent' }
				],
				bands: [[4, 3, withAlpha(setColors.estimate, 0.15)]]
			},
			{
				id: 'gospa',
				title: `GOSPA^${p} split (c ${c}, p ${p})`,
				unit: unitP,
				lines: [
					{
						label: 'localization',
						values: loc,
						color: setColors.estimate,
						fill: withAlpha(setColors.estimate, 0.35)
					},
					{
						label: '+ missed',
						values: sum(loc, missed),
						color: setColors.truth,
						fill: withAlpha(setColors.truth, 0.3)
					},
					{
						label: '+ false',
						values: sum(loc, missed, falses),
						color: setColors.measurement,
						fill: withAlpha(setColors.measurement, 0.3)
					}
				],
				bands: [
					[2, 1, withAlpha(setColors.measurement, 0.3)],
					[1, 0, withAlpha(setColors.truth, 0.3)]
				]
			},
			{
				id: 'ospa',
				title: 'OSPA',
				unit: 'm',
				lines: [
					{ label: 'mean', values: col('ospa').mean, color: setColors.ego },
					{ label: 'max', values: col('ospa').max, color: setColors.ego, dash: [2, 3] }
				]
			},
			{
				id: 'nees',
				title: `Mean NEES (dim ${this.dim}), 95 % band`,
				unit: 'χ²',
				lines: [
					{ label: 'NEES', values: col('nees_mean').mean, color: setColors.estimate },
					{
						label: 'lower',
						values: s.t.map(() => b.lower),
						color: withAlpha(setColors.zone, 0.5),
						dash: [3, 3]
					},
					{
						label: 'upper',
						values: s.t.map(() => b.upper),
						color: withAlpha(setColors.zone, 0.5),
						dash: [3, 3]
					}
				],
				bands: [[2, 1, withAlpha(setColors.zone, 0.08)]]
			},
			{
				id: 'zones',
				title: 'Zone occupancy',
				unit: 'P',
				lines: Object.entries(s.zones).map(([name, z], i) => ({
					label: name,
					values: z.mean,
					color: zoneColors[i % 4]
				}))
			}
		];
	});

	destroy() {
		this.#abort?.abort();
		if (this.#growTimer !== null) clearTimeout(this.#growTimer);
	}
}
