/**
 * The Live board's state: one socket to `/live`, whose summaries (at most 4 a second) replace the tiles,
 * applied on the next animation frame.
 */
import type { BoardRun } from '$lib/protocol/live';
import { LiveSocket, type LiveSocketStatus } from '$lib/viewer/live-socket';

export class LiveBoard {
	runs = $state.raw<BoardRun[]>([]);
	connection = $state<LiveSocketStatus | 'idle'>('idle');
	/** when the last summary arrived, this clock */
	updatedAt = $state(0);
	/** server clock − this clock, ms */
	offsetMs = $state(0);

	#socket: LiveSocket | null = null;
	#next: BoardRun[] | null = null;
	#raf = 0;

	constructor(initial: BoardRun[]) {
		this.runs = initial;
	}

	start() {
		this.#socket = new LiveSocket({
			path: '/live',
			onStatus: (s) => (this.connection = s),
			onMessage: (m, at) => {
				if (m.type !== 'board') return;
				this.#next = m.runs;
				this.updatedAt = at;
				if (!this.#raf) this.#raf = requestAnimationFrame(() => this.#apply());
			}
		});
		this.#socket.connect();
	}

	#apply() {
		this.#raf = 0;
		if (this.#next) this.runs = this.#next;
		this.#next = null;
		this.offsetMs = this.#socket?.offsetMs ?? 0;
	}

	destroy() {
		if (this.#raf) cancelAnimationFrame(this.#raf);
		this.#socket?.destroy();
		this.#socket = null;
	}
}
