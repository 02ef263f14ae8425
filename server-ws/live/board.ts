/**
 * The Live board's socket: one summary message with every live run, sent at most `hz` times a second and only
 * when something changed. Summaries are kept here from each live run's PubSub subscription, so the cost per
 * board viewer is one small message per tick, whatever the rigs' frame rates. Which runs are live is read
 * from the database every 2 s while anyone watches the board (a run streamed by another process shows too).
 */
import type { WebSocket } from 'ws';
import { BOARD_HZ, quietTile, type BoardRun, type LiveRunInfo } from '../../src/lib/protocol/live';
import { RateMeter } from '../../src/lib/viewer/live-meters';
import type { PubSub, RunEvent } from '../pubsub';
import { encode } from './encode';
import type { LiveViewer } from './viewer';

const POLL_MS = 2000;

interface Tracked {
	summary: BoardRun;
	rate: RateMeter;
	unsubscribe: () => void;
}

export interface BoardOptions {
	pubsub: PubSub<RunEvent>;
	liveRuns: () => Promise<LiveRunInfo[]>;
	hz?: number;
	onError: (error: unknown, context: string) => void;
}

export class BoardHub {
	#o: BoardOptions;
	#viewers = new Set<LiveViewer>();
	#runs = new Map<string, Tracked>();
	#timers: ReturnType<typeof setInterval>[] = [];
	#dirty = false;
	#polled: Promise<void> | null = null;

	constructor(options: BoardOptions) {
		this.#o = options;
	}

	async add(viewer: LiveViewer, ws: WebSocket) {
		this.#viewers.add(viewer);
		if (this.#timers.length === 0) {
			this.#polled = this.#poll();
			this.#timers = [
				setInterval(() => void this.#poll(), POLL_MS),
				setInterval(() => this.#tick(), 1000 / (this.#o.hz ?? BOARD_HZ))
			];
			for (const t of this.#timers) t.unref();
		}
		await this.#polled;
		if (this.#viewers.has(viewer)) viewer.attach(ws, this.#message());
	}

	remove(viewer: LiveViewer) {
		this.#viewers.delete(viewer);
		if (this.#viewers.size === 0) this.close();
	}

	close() {
		for (const t of this.#timers) clearInterval(t);
		this.#timers = [];
		this.#polled = null;
		for (const r of this.#runs.values()) r.unsubscribe();
		this.#runs.clear();
	}

	async #poll() {
		let live: LiveRunInfo[];
		try {
			live = await this.#o.liveRuns();
		} catch (error) {
			this.#o.onError(error, 'listing live runs failed');
			return;
		}
		if (this.#viewers.size === 0) return;
		const ids = new Set(live.map((r) => r.id));
		for (const [id, tracked] of this.#runs) {
			if (ids.has(id)) continue;
			tracked.unsubscribe();
			this.#runs.delete(id);
			this.#dirty = true;
		}
		for (const info of live) {
			const known = this.#runs.get(info.id);
			if (known) {
				if (known.summary.state !== info.state) {
					known.summary.state = info.state;
					this.#dirty = true;
				}
				continue;
			}
			this.#track(info);
			this.#dirty = true;
		}
	}

	#track(info: LiveRunInfo) {
		const summary = quietTile(info);
		const rate = new RateMeter(2);
		const unsubscribe = this.#o.pubsub.subscribe(info.id, (e) => {
			if (e.kind === 'frame') {
				rate.add(e.t);
				summary.seq = e.seq;
				summary.t = e.t;
				summary.fps = rate.rate;
				summary.lag_ms = Date.now() - e.t * 1000;
				summary.n_measurements = e.metrics?.n_measurements ?? e.frame.measurements?.length ?? null;
				summary.n_estimates = e.metrics?.n_estimates ?? e.frame.estimates?.length ?? null;
				summary.n_truth = e.metrics?.n_truth ?? e.frame.truth?.length ?? null;
				summary.gospa = e.metrics?.gospa ?? null;
				summary.frames++;
			} else if (e.kind === 'state') {
				summary.state = e.state;
			} else return;
			this.#dirty = true;
		});
		this.#runs.set(info.id, { summary, rate, unsubscribe });
	}

	#message(): Uint8Array {
		const runs = [...this.#runs.values()]
			.map((r) => r.summary)
			.sort((a, b) => a.rig.localeCompare(b.rig) || a.name.localeCompare(b.name));
		return encode({ type: 'board', now: Date.now(), runs });
	}

	#tick() {
		if (!this.#dirty || this.#viewers.size === 0) return;
		this.#dirty = false;
		const bytes = this.#message();
		for (const v of this.#viewers) v.offerFrame(bytes);
	}
}
