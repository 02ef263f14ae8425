/**
 * The viewer socket (docs/live.md): what Skein sends to people watching runs live, shared by the server
 * (server-ws/live) and the browser. Every message is one MessagePack map with a string `type`.
 */
import type { FrameMetrics } from '$lib/metrics/frame';
import type { Frame } from '$lib/protocol/types';
import { percentile } from '../percentile';

export const LIVE_PROTOCOL = 1;
/** `/live/{runId}` follows one run; `/live` alone is the Live board's summary socket */
export const LIVE_PATH = '/live';
/** summaries per second the board socket sends at most */
export const BOARD_HZ = 4;

export type LiveRunState = 'live' | 'ended' | 'interrupted' | 'imported';

/** Close codes of the viewer socket besides the standard ones. */
export const LiveCloseCode = {
	runEnded: 1000,
	goingAway: 1001,
	/** the session was signed out, expired or its person deactivated */
	sessionInvalid: 4401,
	/** the person's role no longer reads runs */
	forbidden: 4403
} as const;

export interface LiveRunInfo {
	id: string;
	name: string;
	rig: string;
	state: LiveRunState;
	state_fields: string[];
	measurement_fields: string[];
	coords: 'world' | 'ego';
	/** device time of the first stored frame, s since the epoch; null before the first frame */
	first_t: number | null;
	last_t: number | null;
	frames: number;
}

export interface HelloMessage {
	type: 'hello';
	protocol: number;
	run: LiveRunInfo;
	/** server clock, ms since the epoch */
	now: number;
}

export interface LiveFrameMessage {
	type: 'frame';
	/** frames of this run committed but not sent to this viewer since the previous frame message */
	skipped: number;
	/** messages of this run quarantined since the previous frame message */
	quarantined: number;
	seq: number;
	/** device time, s since the epoch */
	t: number;
	/** server clock when the frame was durable, ms since the epoch */
	committed_at: number;
	frame: Frame;
	/** the stored per-frame metric columns; null when the server did not compute them */
	metrics: FrameMetrics | null;
}

export interface StateMessage {
	type: 'state';
	state: LiveRunState;
	/** server clock, ms since the epoch */
	at: number;
}

export interface PongMessage {
	type: 'pong';
	/** the client's `c` from the ping, echoed */
	c: number;
	/** server clock when answering, ms since the epoch */
	s: number;
}

/** One tile of the Live board. */
export interface BoardRun {
	id: string;
	name: string;
	rig: string;
	state: LiveRunState;
	seq: number | null;
	t: number | null;
	/** frames per second of device time over the last 2 s */
	fps: number | null;
	/** device time → committed at Skein (server clock) of the newest frame, ms */
	lag_ms: number | null;
	n_measurements: number | null;
	n_estimates: number | null;
	n_truth: number | null;
	gospa: number | null;
	frames: number;
}

/** A tile before any frame was seen by this board. */
export function quietTile(
	run: Pick<LiveRunInfo, 'id' | 'name' | 'rig' | 'state' | 'last_t' | 'frames'>
): BoardRun {
	return {
		id: run.id,
		name: run.name,
		rig: run.rig,
		state: run.state,
		seq: null,
		t: run.last_t,
		fps: null,
		lag_ms: null,
		n_measurements: null,
		n_estimates: null,
		n_truth: null,
		gospa: null,
		frames: run.frames
	};
}

export interface BoardMessage {
	type: 'board';
	now: number;
	runs: BoardRun[];
}

export type LiveServerMessage =
	HelloMessage | LiveFrameMessage | StateMessage | PongMessage | BoardMessage;

/** The only message a viewer sends: a clock probe, answered with `pong`. */
export interface PingMessage {
	type: 'ping';
	/** the client's clock, ms since the epoch */
	c: number;
}

/** Per-viewer figures of the live endpoint, for operators and the tests (GET /live as JSON). */
export interface LiveViewerStats {
	run: string | null;
	/** messages waiting to be sent to this viewer: never more than one frame plus a state and a pong */
	pending: number;
	/** bytes ws has not handed to the kernel yet */
	buffered: number;
	sent: number;
	skipped: number;
}

export interface LiveStats {
	viewers: LiveViewerStats[];
}

/** Where the socket server registers its live statistics, read by the SvelteKit side (another module copy). */
export const LIVE_STATS_KEY = 'skein.live.stats';

export function readLiveStats(): LiveStats {
	const holder = globalThis as { [key: symbol]: (() => LiveStats)[] | undefined };
	const sources = holder[Symbol.for(LIVE_STATS_KEY)] ?? [];
	return { viewers: sources.flatMap((s) => s().viewers) };
}

export function registerLiveStats(source: () => LiveStats): () => void {
	const holder = globalThis as { [key: symbol]: (() => LiveStats)[] | undefined };
	const sources = (holder[Symbol.for(LIVE_STATS_KEY)] ??= []);
	sources.push(source);
	return () => {
		const i = sources.indexOf(source);
		if (i >= 0) sources.splice(i, 1);
	};
}

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
