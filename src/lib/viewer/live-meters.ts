/** Meters of a live stream: latency percentiles over a time window, and frame rate in device time. */
import { percentile } from '../percentile';

/** Latency samples kept for a window of time; nearest-rank percentiles over what is left. */
export class LatencyWindow {
	#t: number[] = [];
	#v: number[] = [];
	readonly windowMs: number;

	constructor(windowMs = 60_000) {
		this.windowMs = windowMs;
	}

	add(now: number, value: number) {
		this.#t.push(now);
		this.#v.push(value);
		this.#trim(now);
	}

	#trim(now: number) {
		let drop = 0;
		while (drop < this.#t.length && this.#t[drop] < now - this.windowMs) drop++;
		if (drop) {
			this.#t.splice(0, drop);
			this.#v.splice(0, drop);
		}
	}

	get size() {
		return this.#v.length;
	}

	percentile(p: number, now?: number): number | null {
		if (now !== undefined) this.#trim(now);
		if (!this.#v.length) return null;
		return percentile(this.#v, p);
	}
}

/** Frames per second of device time, from the t of the frames seen (skipped ones counted in). */
export class RateMeter {
	#t: number[] = [];
	#n: number[] = [];
	readonly spanS: number;

	constructor(spanS = 2) {
		this.spanS = spanS;
	}

	/** `count` frames up to device time t (a message standing for skipped frames counts them too) */
	add(t: number, count = 1) {
		this.#t.push(t);
		this.#n.push(count);
		while (this.#t.length > 1 && this.#t[0] < t - this.spanS) {
			this.#t.shift();
			this.#n.shift();
		}
	}

	get rate(): number | null {
		if (this.#t.length < 2) return null;
		const span = this.#t[this.#t.length - 1] - this.#t[0];
		if (span <= 0) return null;
		let n = 0;
		for (let i = 1; i < this.#n.length; i++) n += this.#n[i];
		return n / span;
	}
}
