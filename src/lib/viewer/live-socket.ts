/**
 * The browser end of the viewer socket (docs/live.md): connects, decodes MessagePack, reconnects with backoff
 * and keeps an estimate of the server's clock relative to this one (from ping/pong round trips), so latency
 * can be told against device time whatever this machine's clock says. No DOM beyond WebSocket.
 */
import { pack, unpack } from '../msgpack';
import { LiveCloseCode, type LiveServerMessage } from '$lib/protocol/live';

export type LiveSocketStatus = 'connecting' | 'open' | 'retrying' | 'closed';

export interface LiveSocketOptions {
	/** `/live/{runId}` or `/live` */
	path: string;
	onMessage: (message: LiveServerMessage, receivedAt: number) => void;
	onStatus?: (status: LiveSocketStatus, detail: string) => void;
	/** clock source, ms since the epoch; Date.now by default */
	now?: () => number;
}

interface ClockSample {
	at: number;
	rtt: number;
	offset: number;
}

export class LiveSocket {
	/** server clock − this clock, ms; 0 until the first round trip */
	offsetMs = 0;
	/** the round trip behind offsetMs */
	rttMs: number | null = null;

	#o: LiveSocketOptions;
	#ws: WebSocket | null = null;
	#retryMs = 500;
	#timers = new Set<ReturnType<typeof setTimeout>>();
	#pingTimer: ReturnType<typeof setInterval> | undefined;
	#samples: ClockSample[] = [];
	#stopped = false;

	constructor(options: LiveSocketOptions) {
		this.#o = options;
	}

	now(): number {
		return (this.#o.now ?? Date.now)();
	}

	/** this clock, read as the server's */
	serverNow(): number {
		return this.now() + this.offsetMs;
	}

	connect() {
		if (this.#stopped || this.#ws) return;
		const scheme = location.protocol === 'https:' ? 'wss:' : 'ws:';
		const ws = new WebSocket(`${scheme}//${location.host}${this.#o.path}`);
		ws.binaryType = 'arraybuffer';
		this.#ws = ws;
		this.#o.onStatus?.('connecting', '');
		ws.onopen = () => {
			this.#retryMs = 500;
			this.#o.onStatus?.('open', '');
			// a few quick probes for a first clock estimate, then one every 10 s
			for (const ms of [0, 250, 750]) this.#later(() => this.#ping(), ms);
			this.#pingTimer = setInterval(() => this.#ping(), 10_000);
		};
		ws.onmessage = (e: MessageEvent<ArrayBuffer>) => {
			const at = this.now();
			let msg: LiveServerMessage;
			try {
				msg = unpack(new Uint8Array(e.data)) as LiveServerMessage;
			} catch {
				return;
			}
			if (msg.type === 'pong') this.#clock(msg.c, msg.s, at);
			else this.#o.onMessage(msg, at);
		};
		ws.onclose = (e) => {
			clearInterval(this.#pingTimer);
			this.#ws = null;
			const final =
				e.code === LiveCloseCode.runEnded ||
				e.code === LiveCloseCode.sessionInvalid ||
				e.code === LiveCloseCode.forbidden;
			if (this.#stopped || final) {
				this.#o.onStatus?.('closed', e.reason);
				return;
			}
			this.#o.onStatus?.('retrying', e.reason || 'connection lost');
			this.#later(() => this.connect(), this.#retryMs);
			this.#retryMs = Math.min(10_000, this.#retryMs * 2);
		};
	}

	#later(fn: () => void, ms: number) {
		const t = setTimeout(() => {
			this.#timers.delete(t);
			fn();
		}, ms);
		this.#timers.add(t);
	}

	#ping() {
		if (this.#ws?.readyState === WebSocket.OPEN)
			this.#ws.send(new Uint8Array(pack({ type: 'ping', c: this.now() })));
	}

	/** NTP-style: the sample with the shortest round trip in the last minute gives the offset. */
	#clock(sentAt: number, serverAt: number, receivedAt: number) {
		const rtt = receivedAt - sentAt;
		if (rtt < 0) return;
		this.#samples.push({ at: receivedAt, rtt, offset: serverAt - (sentAt + rtt / 2) });
		this.#samples = this.#samples.filter((s) => s.at > receivedAt - 60_000);
		const best = this.#samples.reduce((a, b) => (b.rtt < a.rtt ? b : a));
		this.offsetMs = best.offset;
		this.rttMs = best.rtt;
	}

	destroy() {
		this.#stopped = true;
		for (const t of this.#timers) clearTimeout(t);
		this.#timers.clear();
		clearInterval(this.#pingTimer);
		this.#ws?.close(1000, 'viewer left');
		this.#ws = null;
	}
}
