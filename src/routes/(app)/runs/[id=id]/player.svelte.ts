/**
 * The playhead of the Run screen: time, play/pause, speed and steps, and the frame cache behind it.
 * The displayed frame is the nearest one on hand; while the wanted window loads the screen says "catching up".
 */
import {
	evaluateFrame,
	parseMetricSettings,
	defaultMetricSettings,
	type FrameEvaluation,
	type MetricSettings
} from '$lib/metrics';
import { unpack } from '$lib/msgpack';
import type { FramePage } from '$lib/api-types';
import type { Frame } from '$lib/protocol/types';
import type { Coords } from '$lib/runs';
import { FrameCache } from '$lib/viewer/frame-cache';

export const SPEEDS = [0.1, 0.25, 0.5, 1, 2, 4, 8, 16] as const;
/** seconds of history the scene draws as trails */
export const TRAIL_S = 5;
/** side-panel refreshes a second while playing */
const PANEL_HZ = 5;

export interface PlayerRun {
	id: string;
	firstT: number | null;
	duration: number;
	frameRate: number | null;
	stateFields: string[];
	coords: Coords;
	metricSettings: Record<string, unknown> | null;
}

export class RunPlayer {
	t = $state(0);
	playing = $state(false);
	speed = $state(1);
	direction = $state<1 | -1>(1);
	#frame = $state.raw<Frame | null>(null);
	/** the frame on screen (set here, or by the live follower) and its run-relative time */
	get frame(): Frame | null {
		return this.#frame;
	}
	set frame(f: Frame | null) {
		this.#frame = f;
		this.#syncPanel(false);
	}
	frameT = $state(0);
	catchingUp = $state(false);
	/** counts windows and probes arriving: what depends on the frames on hand (trails) reads it */
	arrivals = $state(0);
	/** the frame the side panels (ledger, inspector) show: the one on screen, at most PANEL_HZ times a second while it moves */
	panel = $state.raw<{ frame: Frame | null; t: number }>({ frame: null, t: 0 });

	readonly run: PlayerRun;
	/** seconds from the first frame to the last one known; grows while a live run is followed */
	duration = $state(0);
	/** device time of the run's first frame; null until a run that had no frames when the page opened gets one */
	firstT = $state<number | null>(null);
	/** null while the run has no frames */
	cache = $state.raw<FrameCache | null>(null);
	readonly settings: MetricSettings;
	readonly evaluation: FrameEvaluation | null = $derived.by(() =>
		this.frame ? this.evaluate(this.frame) : null
	);
	readonly panelEvaluation: FrameEvaluation | null = $derived.by(() =>
		this.panel.frame ? this.evaluate(this.panel.frame) : null
	);

	#raf = 0;
	#panelAt = 0;
	#panelTimer: ReturnType<typeof setTimeout> | undefined;
	#last = 0;
	#evals = new WeakMap<Frame, FrameEvaluation>();
	/** frames shown live in the last TRAIL_S seconds, oldest first */
	#live: Frame[] = [];

	constructor(run: PlayerRun, t0 = 0) {
		this.run = run;
		const parsed = run.metricSettings
			? parseMetricSettings(run.metricSettings, run.stateFields)
			: null;
		this.settings = parsed?.ok ? parsed.settings : defaultMetricSettings;
		this.duration = run.duration;
		this.t = clamp(t0, 0, run.duration);
		if (run.firstT !== null) this.begin(run.firstT);
	}

	/** The run's first frame is at device time `firstT`: from now on frames can be fetched and scrubbed. */
	begin(firstT: number) {
		if (this.firstT !== null) return;
		this.firstT = firstT;
		const rate = this.run.frameRate && this.run.frameRate > 0 ? this.run.frameRate : 10;
		this.cache = new FrameCache({
			firstT,
			duration: this.duration,
			// ~40 frames a window keeps each fetch small even for heavy frames
			windowS: Math.max(0.5, 40 / rate),
			maxWindows: 24,
			fetchWindow: (from, to, signal) => this.#fetch(from, to, signal, 5000),
			// the frame at the playhead: the last frame in the frame period or two before it
			fetchProbe: (at, signal) => this.#fetch(at - 1.5 / rate, at, signal, 64),
			onChange: () => {
				this.arrivals++;
				this.refresh();
			}
		});
	}

	/** starts fetching; called from the browser only (never during server rendering) */
	start() {
		this.refresh();
	}

	async #fetch(from: number, to: number, signal: AbortSignal, limit: number): Promise<Frame[]> {
		const res = await fetch(
			`/api/runs/${this.run.id}/frames?from=${from}&to=${to}&limit=${limit}`,
			{
				headers: { accept: 'application/x-msgpack' },
				signal
			}
		);
		if (!res.ok) throw new Error(`frames: HTTP ${res.status}`);
		return (unpack(new Uint8Array(await res.arrayBuffer())) as FramePage).frames;
	}

	/** evaluation per frame, kept as long as the frame is cached */
	evaluate(frame: Frame): FrameEvaluation | null {
		let e = this.#evals.get(frame);
		if (!e) {
			try {
				e = evaluateFrame(frame, {
					stateFields: this.run.stateFields,
					settings: this.settings,
					coords: this.run.coords
				});
			} catch {
				return null;
			}
			this.#evals.set(frame, e);
		}
		return e;
	}

	/** Asks the cache for the windows around t and shows the nearest frame on hand. */
	refresh() {
		if (!this.cache) return;
		this.cache.want(this.t, this.direction, TRAIL_S, this.playing ? 2 : 1, !this.playing);
		const found = this.cache.lookup(this.t);
		this.catchingUp = !found?.exact;
		if (found && found.frame !== this.frame) {
			this.frameT = found.t;
			this.frame = found.frame;
		}
		this.#syncPanel(!this.playing);
	}

	/** Svelte re-renders the ledger and inspector a few times a second while frames stream by, at once after a seek or a step */
	#syncPanel(now: boolean) {
		if (this.panel.frame === this.#frame) return;
		const wait = now ? 0 : this.#panelAt + 1000 / PANEL_HZ - performance.now();
		if (wait > 0) {
			this.#panelTimer ??= setTimeout(() => {
				this.#panelTimer = undefined;
				this.#syncPanel(true);
			}, wait);
			return;
		}
		clearTimeout(this.#panelTimer);
		this.#panelTimer = undefined;
		this.#panelAt = performance.now();
		const f = this.#frame;
		this.panel = { frame: f, t: f && this.firstT !== null ? f.t - this.firstT : 0 };
	}

	/** trail frames: the last TRAIL_S seconds up to the frame on screen (on hand when `arrivals` last changed) */
	trail(): Frame[] {
		void this.arrivals;
		const cached = this.cache ? this.cache.range(this.frameT - TRAIL_S, this.frameT) : [];
		if (this.#live.length === 0 || this.firstT === null) return cached;
		// frames shown live after the newest one the cache holds
		const to = this.firstT + this.frameT;
		const after = cached.length > 0 ? cached[cached.length - 1].t : to - TRAIL_S - 1;
		const live = this.#live.filter((f) => f.t > after && f.t >= to - TRAIL_S && f.t <= to);
		return live.length === 0 ? cached : [...cached, ...live];
	}

	/** A frame shown live (the follower): kept for TRAIL_S seconds, so trails draw while following. */
	noteLive(frame: Frame) {
		this.#live.push(frame);
		while (this.#live.length > 0 && this.#live[0].t < frame.t - TRAIL_S) this.#live.shift();
		this.arrivals++;
	}

	/** the run has frames up to `duration` now (a followed live run); the timeline and the cache grow with it */
	extend(duration: number) {
		if (!(duration > this.duration)) return;
		this.duration = duration;
		this.cache?.extend(duration);
	}

	seek(t: number) {
		this.t = clamp(t, 0, this.duration);
		this.refresh();
	}

	toggle() {
		if (this.playing) this.pause();
		else this.play();
	}

	play() {
		if (this.playing) return;
		if (this.t >= this.duration) this.t = 0;
		this.playing = true;
		this.direction = 1;
		this.#last = performance.now();
		const tick = (now: number) => {
			if (!this.playing) return;
			const dt = Math.min(0.25, (now - this.#last) / 1000);
			this.#last = now;
			this.t = Math.min(this.duration, this.t + dt * this.speed);
			this.refresh();
			if (this.t >= this.duration) this.playing = false;
			else this.#raf = requestAnimationFrame(tick);
		};
		this.#raf = requestAnimationFrame(tick);
	}

	pause() {
		this.playing = false;
		if (this.#raf) cancelAnimationFrame(this.#raf);
		this.#raf = 0;
		this.#syncPanel(true);
	}

	faster(step: 1 | -1) {
		const i = SPEEDS.indexOf(this.speed as (typeof SPEEDS)[number]);
		this.speed = SPEEDS[clamp((i < 0 ? 3 : i) + step, 0, SPEEDS.length - 1)];
	}

	stepFrame(step: 1 | -1) {
		this.pause();
		this.direction = step;
		const next = this.cache?.stepFrom(this.frameT, step);
		const rate = this.run.frameRate && this.run.frameRate > 0 ? this.run.frameRate : 10;
		this.seek(next ?? this.frameT + step / rate);
	}

	stepSecond(step: 1 | -1) {
		this.pause();
		this.direction = step;
		this.seek(this.t + step);
	}

	destroy() {
		this.pause();
		clearTimeout(this.#panelTimer);
		this.cache?.destroy();
	}
}

export function clamp(v: number, lo: number, hi: number) {
	return Math.min(hi, Math.max(lo, v));
}
