/**
 * One viewer's outbox. A slow viewer never builds a queue: there is one slot per kind of message (the newest
 * frame, the newest state, the newest pong). Slots are written to the socket while ws holds less than
 * `highWater` bytes that the kernel has not taken (`bufferedAmount`); past that, the next goes out when a write
 * completes (the send callback). A viewer keeping up gets every frame, even of a burst committed together; one
 * that does not read has at most highWater + one message in ws and one frame waiting here. A frame replaced
 * before it was sent is counted, and the count travels with the next frame sent (`skipped`).
 */
import type { WebSocket } from 'ws';
import type { LiveViewerStats } from '../../src/lib/api-types';
import { frameWithCounts } from './encode';

type Slot = 'frame' | 'state' | 'pong';

interface Pending {
	bytes: Uint8Array;
	/** arrival order: slots are sent oldest first, so a frame committed before "ended" goes before it */
	order: number;
	after?: () => void;
}

/** What a viewer can be sent through: the subset of ws's WebSocket used here (a fake in unit tests). */
export type ViewerSocket = Pick<WebSocket, 'send' | 'readyState' | 'bufferedAmount' | 'OPEN'>;

export class LiveViewer {
	readonly runId: string | null;
	readonly sessionId: string;
	sent = 0;
	skippedTotal = 0;

	#ws: ViewerSocket | null = null;
	#slots = new Map<Slot, Pending>();
	#order = 0;
	/** writes ws has not completed */
	#inFlight = 0;
	#highWater: number;
	/** frames replaced before being sent, since the last frame sent */
	#skipped = 0;
	#quarantined = 0;
	/** frame bodies do not carry counts; the board's messages are sent as they are */
	#countsInFrames: boolean;

	constructor(opts: {
		runId: string | null;
		sessionId: string;
		countsInFrames: boolean;
		highWater?: number;
	}) {
		this.runId = opts.runId;
		this.#highWater = opts.highWater ?? 64 * 1024;
		this.sessionId = opts.sessionId;
		this.#countsInFrames = opts.countsInFrames;
	}

	/** Starts sending: the hello first, then whatever waited while the socket opened. */
	attach(ws: ViewerSocket, hello: Uint8Array) {
		this.#ws = ws;
		this.#write(hello);
		this.#pump();
	}

	detach() {
		this.#ws = null;
		this.#slots.clear();
	}

	/** `body`: a frame message without its counts (see encode.ts), or a whole board message. */
	offerFrame(body: Uint8Array) {
		if (this.#slots.has('frame')) {
			this.#skipped++;
			this.skippedTotal++;
		}
		this.#put('frame', { bytes: body, order: this.#order++ });
	}

	noteQuarantined() {
		this.#quarantined++;
	}

	offerState(bytes: Uint8Array, after?: () => void) {
		this.#put('state', { bytes, order: this.#order++, after });
	}

	offerPong(bytes: Uint8Array) {
		this.#put('pong', { bytes, order: this.#order++ });
	}

	get pending(): number {
		return this.#slots.size;
	}

	stats(): LiveViewerStats {
		return {
			run: this.runId,
			pending: this.pending,
			buffered: this.#ws?.bufferedAmount ?? 0,
			sent: this.sent,
			skipped: this.skippedTotal
		};
	}

	#put(slot: Slot, p: Pending) {
		this.#slots.set(slot, p);
		this.#pump();
	}

	#pump() {
		for (;;) {
			const ws = this.#ws;
			if (ws === null || ws.readyState !== ws.OPEN || this.#slots.size === 0) return;
			if (this.#inFlight > 0 && ws.bufferedAmount >= this.#highWater) return;
			let next: [Slot, Pending] | null = null;
			for (const entry of this.#slots)
				if (next === null || entry[1].order < next[1].order) next = entry;
			if (next === null) return;
			const [slot, p] = next;
			this.#slots.delete(slot);
			let bytes = p.bytes;
			if (slot === 'frame' && this.#countsInFrames) {
				bytes = frameWithCounts(p.bytes, this.#skipped, this.#quarantined);
				this.#skipped = 0;
				this.#quarantined = 0;
			}
			this.#write(bytes, p.after);
		}
	}

	#write(bytes: Uint8Array, after?: () => void) {
		const ws = this.#ws;
		if (ws === null) return;
		this.#inFlight++;
		ws.send(bytes, { binary: true }, (err) => {
			this.#inFlight--;
			if (err) return;
			this.sent++;
			after?.();
			this.#pump();
		});
	}
}
