/**
 * Following a live run on the Run screen. While following, the newest committed frame is put on the player
 * once per animation frame (never once per message); latency is device time → on screen, read against the
 * server's clock (see LiveSocket), with its p95 over the last minute. Any move of the playhead by the person
 * (scrub, step, play) leaves following; `L` (follow()) returns to the live edge.
 */
import type { LiveFrameMessage, LiveServerMessage } from '$lib/protocol/live';
import type { RunStatus } from '$lib/runs';
import { LatencyWindow, RateMeter } from '$lib/viewer/live-meters';
import { LiveSocket, type LiveSocketStatus } from '$lib/viewer/live-socket';
import type { RunPlayer } from './player.svelte';

declare global {
	interface Window {
		/** live figures, read by the benchmark and the end-to-end test */
		__skeinLive?: { frames: number; shown: number; seq: number | null; latencies: number[] };
	}
}

export interface LiveFollowOptions {
	runId: string;
	/** the run's status when the page loaded: only a live run is connected */
	status: string;
	/** start at the live edge (the Live board's links ask for it) */
	follow: boolean;
}

export class LiveFollow {
	connection = $state<LiveSocketStatus | 'idle'>('idle');
	runState = $state<RunStatus | null>(null);
	/** the state changed while this page watched (ended, interrupted, live again) */
	stateChangedAt = $state<number | null>(null);
	/** wants the live edge; isFollowing also checks that the playhead was not moved since */
	following = $state(false);
	seq = $state<number | null>(null);
	t = $state<number | null>(null);
	fps = $state<number | null>(null);
	latencyMs = $state<number | null>(null);
	latencyP95 = $state<number | null>(null);
	skipped = $state(0);
	received = $state(0);
	/** run-relative time of the frame shown while following */
	liveT = $state<number | null>(null);

	readonly isFollowing = $derived.by(
		() => this.following && !this.player.playing && this.player.t === this.#shownT
	);

	readonly player: RunPlayer;
	#o: LiveFollowOptions;
	#socket: LiveSocket | null = null;
	#latest: LiveFrameMessage | null = null;
	#shownT = $state<number | null>(null);
	#raf = 0;
	#rate = new RateMeter(2);
	#window = new LatencyWindow(60_000);
	#statsAt = 0;

	constructor(player: RunPlayer, options: LiveFollowOptions) {
		this.player = player;
		this.#o = options;
		this.following = options.follow;
	}

	get live(): boolean {
		return this.#socket !== null;
	}

	/** browser only */
	start() {
		if (this.#o.status !== 'live') return;
		window.__skeinLive = { frames: 0, shown: 0, seq: null, latencies: [] };
		this.#socket = new LiveSocket({
			path: `/live/${this.#o.runId}`,
			onMessage: (m) => this.#receive(m),
			onStatus: (s) => (this.connection = s)
		});
		this.#socket.connect();
	}

	follow() {
		if (!this.#socket) return;
		this.player.pause();
		this.following = true;
		if (this.#latest) this.#show(this.#latest);
		else if (this.#shownT !== null) this.player.t = this.#shownT;
	}

	/** back into history: the playhead stays where the person puts it */
	leave() {
		this.following = false;
	}

	#receive(m: LiveServerMessage) {
		if (m.type === 'hello') {
			if (m.run.first_t !== null) this.player.begin(m.run.first_t);
			if (this.runState !== null && this.runState !== m.run.state) this.stateChangedAt = Date.now();
			this.runState = m.run.state;
		} else if (m.type === 'state') {
			this.runState = m.state;
			const at = (this.stateChangedAt = Date.now());
			// "live again" is news for a moment; ended and interrupted stay said
			if (m.state === 'live')
				setTimeout(() => this.stateChangedAt === at && (this.stateChangedAt = null), 6000);
		} else if (m.type === 'frame') {
			this.player.begin(m.t);
			this.#rate.add(m.t, 1 + m.skipped);
			this.#latest = m;
			this.received++;
			this.skipped += m.skipped;
			if (window.__skeinLive) window.__skeinLive.frames++;
			if (!this.#raf) this.#raf = requestAnimationFrame(() => this.#tick());
		}
	}

	/** once per animation frame: the newest frame replaces whatever arrived before it */
	#tick() {
		this.#raf = 0;
		const m = this.#latest;
		if (!m) return;
		this.seq = m.seq;
		this.t = m.t;
		this.fps = this.#rate.rate;
		if (this.following && !this.isFollowing && this.#shownT !== null) this.following = false;
		if (this.following) this.#show(m);
	}

	#show(m: LiveFrameMessage) {
		const relT = m.t - (this.player.firstT ?? m.t);
		// the timeline grows with the run, so what arrived while following can be scrubbed afterwards
		this.player.extend(relT);
		const t = relT;
		this.player.noteLive(m.frame);
		this.player.frame = m.frame;
		this.player.frameT = relT;
		this.player.t = t;
		this.player.catchingUp = false;
		this.#shownT = t;
		this.liveT = relT;
		const socket = this.#socket;
		if (!socket) return;
		const now = socket.serverNow();
		const latency = now - m.t * 1000;
		this.#window.add(now, latency);
		this.latencyMs = latency;
		// the p95 is re-sorted a few times a second, not on every frame
		if (now - this.#statsAt > 250) {
			this.#statsAt = now;
			this.latencyP95 = this.#window.percentile(95, now);
		}
		const probe = window.__skeinLive;
		if (probe) {
			probe.shown++;
			probe.seq = m.seq;
			if (probe.latencies.length < 100_000) probe.latencies.push(latency);
		}
	}

	destroy() {
		if (this.#raf) cancelAnimationFrame(this.#raf);
		this.#raf = 0;
		this.#socket?.destroy();
		this.#socket = null;
	}
}
