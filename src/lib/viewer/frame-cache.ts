/**
 * The Run screen's frame cache, without DOM or Svelte: frames arrive in fixed time windows, the windows
 * around the playhead (and ahead in the play direction) are kept, the least recently used go first, and a
 * lookup always answers with the nearest frame on hand, so drawing never waits for the network.
 * After a jump the single frame at the playhead is fetched first (a "probe"), so it can be drawn before its
 * window and the trail windows arrive; fetches nobody wants any more are cancelled.
 */
import type { Frame } from '$lib/protocol/types';

/** t relative to the run's first frame, seconds; absolute device time is firstT + t */
export type FetchWindow = (fromAbs: number, toAbs: number, signal: AbortSignal) => Promise<Frame[]>;
/** the frames with absolute t in [atAbs − span, atAbs], for some span the fetcher chooses (one or two frame periods) */
export type FetchProbe = (atAbs: number, signal: AbortSignal) => Promise<Frame[]>;

/** time tolerance: epoch seconds carry ~0.2 µs of rounding */
const EPS = 1e-5;

export interface FrameCacheOptions {
	firstT: number;
	duration: number;
	/** seconds a window covers */
	windowS: number;
	/** windows kept at most (memory bound) */
	maxWindows: number;
	fetchWindow: FetchWindow;
	/** fetches the frame at the playhead while its window is not loaded; without it the window is awaited */
	fetchProbe?: FetchProbe;
	/** called whenever a window or a probe arrives */
	onChange?: () => void;
	/** a failed window is fetched again when wanted after this long; default 2 s */
	retryMs?: number;
	now?: () => number;
}

interface Window {
	index: number;
	state: 'loading' | 'ready' | 'failed';
	failedAt: number;
	frames: Frame[];
	/** run-relative t of each frame, ascending */
	times: Float64Array;
	abort: AbortController;
	/** the window reached past the run's known end when it was fetched: frames may have arrived since */
	partial: boolean;
}

export interface Lookup {
	frame: Frame;
	/** run-relative t of the frame found */
	t: number;
	/** true when the frame is the one at or just before the wanted time */
	exact: boolean;
}

interface Probe {
	/** run-relative t asked for */
	t: number;
	state: 'loading' | 'ready' | 'failed';
	/** the frame at or before t, when the fetch found one */
	frame: Frame | null;
	frameT: number;
	abort: AbortController;
}

export class FrameCache {
	#o: FrameCacheOptions;
	/** Map order is recency order: the last entry was used last */
	#windows = new Map<number, Window>();
	#probe: Probe | null = null;

	constructor(opts: FrameCacheOptions) {
		this.#o = opts;
	}

	#now() {
		return (this.#o.now ?? Date.now)();
	}

	get windowCount() {
		return this.#windows.size;
	}

	get frameCount() {
		let n = 0;
		for (const w of this.#windows.values()) n += w.frames.length;
		return n;
	}

	get lastWindow() {
		return Math.max(0, Math.floor(this.#o.duration / this.#o.windowS));
	}

	indexOf(t: number): number {
		return Math.min(this.lastWindow, Math.max(0, Math.floor(t / this.#o.windowS)));
	}

	isLoaded(t: number): boolean {
		return this.#windows.get(this.indexOf(t))?.state === 'ready';
	}

	isLoading(): boolean {
		for (const w of this.#windows.values()) if (w.state === 'loading') return true;
		return false;
	}

	/**
	 * Asks for the windows covering [t − behindS, t] and `ahead` windows beyond in the play direction;
	 * touches them so they are the last evicted, then evicts down to maxWindows. `probe`: fetch the frame at t on
	 * its own first when its window is not on hand (after a jump; not while playing, where windows are ahead).
	 */
	want(t: number, direction: 1 | -1 = 1, behindS = 0, ahead = 1, probe = true): void {
		const needed: number[] = [];
		const here = this.indexOf(t);
		needed.push(here);
		for (let k = 1; k <= ahead; k++) {
			const i = here + k * direction;
			if (i >= 0 && i <= this.lastWindow) needed.push(i);
		}
		for (let i = here - 1; i >= this.indexOf(t - behindS); i--) needed.push(i);
		this.#wantProbe(t, here, probe);
		// fetches for windows nobody wants any more are cancelled
		const keep = new Set(needed);
		for (const [index, w] of this.#windows) {
			if (w.state === 'loading' && !keep.has(index)) {
				w.abort.abort();
				this.#windows.delete(index);
			}
		}
		// touch in reverse priority so the current window ends most recent; fetch in priority order, and only
		// once a probe in flight has come back, so the windows do not hold it up
		const missing: number[] = [];
		for (const i of [...needed].reverse()) if (!this.#touch(i)) missing.push(i);
		if (this.#probe?.state !== 'loading') for (const i of missing.reverse()) this.#load(i);
		this.#evict(keep);
	}

	/**
	 * A live run grows: the known end moves to `duration`. Windows fetched while they reached past the old end
	 * are dropped, so they are fetched again, whole, when someone wants them.
	 */
	extend(duration: number): void {
		if (!(duration > this.#o.duration)) return;
		this.#o.duration = duration;
		for (const [index, w] of this.#windows) {
			if (w.partial && w.state !== 'loading') this.#windows.delete(index);
		}
	}

	/** true when the window is on hand or on its way */
	#touch(index: number): boolean {
		const w = this.#windows.get(index);
		if (!w) return false;
		this.#windows.delete(index);
		this.#windows.set(index, w);
		// a failed window is retried after a pause, never in a tight loop
		return !(w.state === 'failed' && this.#now() - w.failedAt >= (this.#o.retryMs ?? 2000));
	}

	#wantProbe(t: number, here: number, wanted: boolean) {
		const p = this.#probe;
		if (!wanted || !this.#o.fetchProbe || this.#windows.get(here)?.state === 'ready') {
			p?.abort.abort();
			this.#probe = null;
			return;
		}
		if (p && Math.abs(p.t - t) <= EPS) return;
		p?.abort.abort();
		const probe: Probe = {
			t,
			state: 'loading',
			frame: null,
			frameT: 0,
			abort: new AbortController()
		};
		this.#probe = probe;
		const at = this.#o.firstT + t;
		this.#o.fetchProbe(at + EPS, probe.abort.signal).then(
			(frames) => {
				if (this.#probe !== probe) return;
				let best: Frame | null = null;
				for (const f of frames) if (f.t <= at + EPS && (!best || f.t > best.t)) best = f;
				probe.frame = best;
				probe.frameT = best ? best.t - this.#o.firstT : 0;
				probe.state = 'ready';
				this.#o.onChange?.();
			},
			() => {
				if (this.#probe !== probe) return;
				probe.state = 'failed';
				this.#o.onChange?.();
			}
		);
	}

	#load(index: number) {
		const abort = new AbortController();
		const w: Window = {
			index,
			state: 'loading',
			failedAt: 0,
			frames: [],
			times: new Float64Array(0),
			abort,
			partial: (index + 1) * this.#o.windowS > this.#o.duration
		};
		this.#windows.set(index, w);
		const from = this.#o.firstT + index * this.#o.windowS;
		const to = from + this.#o.windowS;
		this.#o.fetchWindow(from - EPS, to, abort.signal).then(
			(frames) => {
				if (this.#windows.get(index) !== w) return;
				// windows are half-open [from, to): a frame exactly at `to` belongs to the next one
				const own = frames.filter((f) => this.indexOf(f.t - this.#o.firstT + EPS) === index);
				w.frames = own;
				w.times = Float64Array.from(own, (f) => f.t - this.#o.firstT);
				w.state = 'ready';
				this.#o.onChange?.();
			},
			() => {
				if (this.#windows.get(index) !== w) return;
				w.state = 'failed';
				w.failedAt = this.#now();
				this.#o.onChange?.();
			}
		);
	}

	#evict(keep: Set<number>) {
		for (const [index, w] of this.#windows) {
			if (this.#windows.size <= this.#o.maxWindows) break;
			if (keep.has(index)) continue;
			w.abort.abort();
			this.#windows.delete(index);
		}
	}

	/**
	 * The frame at or just before t if its window is loaded, or if the probe for t found it; otherwise the
	 * nearest frame of any loaded window.
	 */
	lookup(t: number): Lookup | null {
		const p = this.#probe;
		const w = this.#windows.get(this.indexOf(t));
		if (p?.frame && Math.abs(p.t - t) <= EPS && w?.state !== 'ready')
			return { frame: p.frame, t: p.frameT, exact: true };
		if (w?.state === 'ready' && w.frames.length) {
			const i = atOrBefore(w.times, t);
			if (i >= 0) return { frame: w.frames[i], t: w.times[i], exact: true };
			// t falls before the window's first frame: the previous window's last frame is the right one
			const prev = this.#windows.get(w.index - 1);
			if (prev?.state === 'ready' && prev.frames.length) {
				const j = prev.frames.length - 1;
				return { frame: prev.frames[j], t: prev.times[j], exact: true };
			}
			return { frame: w.frames[0], t: w.times[0], exact: w.index === 0 };
		}
		let best: Lookup | null = null;
		let bestGap = Infinity;
		for (const other of this.#windows.values()) {
			if (other.state !== 'ready' || !other.frames.length) continue;
			const i = Math.max(0, atOrBefore(other.times, t));
			for (const k of [i, i + 1]) {
				if (k >= other.frames.length) continue;
				const gap = Math.abs(other.times[k] - t);
				if (gap < bestGap) {
					bestGap = gap;
					best = { frame: other.frames[k], t: other.times[k], exact: false };
				}
			}
		}
		return best;
	}

	/** Frames with run-relative t in [from, to], oldest first, from loaded windows only (for trails). */
	range(from: number, to: number): Frame[] {
		const out: Frame[] = [];
		for (let i = this.indexOf(from); i <= this.indexOf(to); i++) {
			const w = this.#windows.get(i);
			if (w?.state !== 'ready') continue;
			for (let k = 0; k < w.frames.length; k++)
				if (w.times[k] >= from && w.times[k] <= to) out.push(w.frames[k]);
		}
		return out;
	}

	/** The run-relative t of the frame `step` frames from t, within loaded windows; null when not loaded. */
	stepFrom(t: number, step: 1 | -1): number | null {
		const here = this.lookup(t);
		if (!here?.exact) return null;
		const target = step > 0 ? here.t + EPS : here.t - EPS;
		if (step > 0) {
			for (let i = this.indexOf(target); i <= this.lastWindow; i++) {
				const w = this.#windows.get(i);
				if (w?.state !== 'ready') return null;
				const k = atOrBefore(w.times, target) + 1;
				if (k < w.times.length) return w.times[k];
			}
			return null;
		}
		for (let i = this.indexOf(target); i >= 0; i--) {
			const w = this.#windows.get(i);
			if (w?.state !== 'ready') return null;
			const k = atOrBefore(w.times, target - EPS);
			if (k >= 0) return w.times[k];
		}
		return null;
	}

	destroy() {
		this.#probe?.abort.abort();
		this.#probe = null;
		for (const w of this.#windows.values()) w.abort.abort();
		this.#windows.clear();
	}
}

/** Index of the last time ≤ t, or −1. */
export function atOrBefore(times: ArrayLike<number>, t: number): number {
	let lo = 0;
	let hi = times.length - 1;
	let ans = -1;
	while (lo <= hi) {
		const mid = (lo + hi) >> 1;
		if (times[mid] <= t + EPS) {
			ans = mid;
			lo = mid + 1;
		} else hi = mid - 1;
	}
	return ans;
}
