/**
 * A small ingest client for rig integrators (Node, `ws`). The rig calls send() for every frame;
 * numbering, the window, acks, resends, reconnects and resume are handled here.
 *
 *   const client = new SkeinRigClient({ url, key, clientRunId: 'drive-0042', run: { … } });
 *   client.on((e) => e.type === 'server-error' && log(e));
 *   await client.start();
 *   client.send({ t, estimates, truth });
 *   const { run_id, frames } = await client.close();
 */
import WebSocket, { type RawData } from 'ws';
import { decodeMessage, encodeMessage } from './codec';
import { DEFAULT_LIMITS } from './limits';
import {
	CloseCode,
	type ClosedMessage,
	type Encoding,
	type ErrorCode,
	type Frame,
	type RunSpec
} from './types';

export type FrameInput = Omit<Frame, 'seq'>;

export interface SkeinRigClientOptions {
	/** e.g. wss://skein.example.com/ingest/v1 */
	url: string;
	/** the feed key; sent as `Authorization: Bearer <key>` */
	key: string;
	/** default msgpack */
	encoding?: Encoding;
	/** identifies the run across reconnects and restarts of the rig software */
	clientRunId: string;
	run: RunSpec;
	/** reconnect delays: exponential from minMs to maxMs, with jitter; default 250 ms … 30 s */
	backoff?: { minMs?: number; maxMs?: number };
	/** frames kept locally before send() throws; default 100,000 */
	maxQueued?: number;
	/** must not exceed the server's limit; default 1 MiB */
	maxMessageBytes?: number;
	/** with frames outstanding and no ack for this long, the connection is treated as dead; default 15 s */
	ackTimeoutMs?: number;
	/** source of jitter, [0, 1); inject a fixed one for reproducible tests */
	random?: () => number;
}

export type RigClientEvent =
	| { type: 'opened'; runId: string; nextSeq: number; window: number; reconnect: boolean }
	| { type: 'ack'; seq: number }
	| { type: 'server-error'; code: ErrorCode; message: string; seq?: number; nextSeq?: number }
	| { type: 'disconnected'; code: number; reason: string; retryInMs: number }
	| { type: 'fatal'; error: Error };

export interface RigClientStats {
	runId: string | null;
	/** highest seq the server has acknowledged (every seq up to it is stored), -1 before any */
	ackedSeq: number;
	/** frames given to send() and not acknowledged yet */
	queued: number;
	/** of those, frames sent on the current connection and awaiting their ack */
	inFlight: number;
	/** connection attempts after the first */
	reconnects: number;
	connected: boolean;
}

/** The server refused the feed key (HTTP 401) or revoked it (close 4001). Retrying will not help. */
export class SkeinAuthError extends Error {
	constructor(
		message: string,
		readonly status: number
	) {
		super(message);
		this.name = 'SkeinAuthError';
	}
}

/** Anything else that stops the client for good (bad open, frame too large, run taken over…). */
export class SkeinClientError extends Error {
	constructor(message: string) {
		super(message);
		this.name = 'SkeinClientError';
	}
}

interface Entry {
	/** -1 until the run's first next_seq is known */
	seq: number;
	frame: FrameInput;
	payload: Uint8Array | string | null;
}

type Phase = 'idle' | 'running' | 'closed' | 'failed';

interface Deferred<T> {
	resolve(value: T): void;
	reject(error: Error): void;
}

export class SkeinRigClient {
	#o: Required<Omit<SkeinRigClientOptions, 'backoff'>> & { minMs: number; maxMs: number };
	#phase: Phase = 'idle';
	#listeners = new Set<(event: RigClientEvent) => void>();

	#entries: (Entry | undefined)[] = [];
	#head = 0;
	#sendIdx = 0;
	#nextSeq = -1;
	#acked = -1;
	#window: number = 64;
	#paused = false;
	#gapTarget = -1;
	#staleUpTo = -1;

	#ws: WebSocket | null = null;
	#connId = 0;
	#opened = false;
	#runId: string | null = null;
	#attempt = 0;
	#reconnects = 0;
	#everOpened = false;
	#reconnectTimer: ReturnType<typeof setTimeout> | null = null;
	#watchdog: ReturnType<typeof setTimeout> | null = null;

	#closeRequested = false;
	#closeSent = false;
	#startWaiters: Deferred<{ runId: string; nextSeq: number }>[] = [];
	#flushWaiters: Deferred<void>[] = [];
	#closeWaiters: Deferred<{ run_id: string; frames: number }>[] = [];
	#failure: Error | null = null;

	constructor(options: SkeinRigClientOptions) {
		this.#o = {
			url: options.url,
			key: options.key,
			encoding: options.encoding ?? 'msgpack',
			clientRunId: options.clientRunId,
			run: options.run,
			minMs: options.backoff?.minMs ?? 250,
			maxMs: options.backoff?.maxMs ?? 30_000,
			maxQueued: options.maxQueued ?? 100_000,
			maxMessageBytes: options.maxMessageBytes ?? DEFAULT_LIMITS.maxMessageBytes,
			ackTimeoutMs: options.ackTimeoutMs ?? 15_000,
			random: options.random ?? Math.random
		};
	}

	/** Subscribes to client events; returns the unsubscribe function. */
	on(listener: (event: RigClientEvent) => void): () => void {
		this.#listeners.add(listener);
		return () => this.#listeners.delete(listener);
	}

	get stats(): RigClientStats {
		const live = this.#entries.length - this.#head;
		return {
			runId: this.#runId,
			ackedSeq: this.#acked,
			queued: live,
			inFlight: this.#opened ? this.#sendIdx - this.#head : 0,
			reconnects: this.#reconnects,
			connected: this.#opened
		};
	}

	/** Connects and opens (or resumes) the run; resolves at the first `opened`. */
	start(): Promise<{ runId: string; nextSeq: number }> {
		if (this.#failure !== null) return Promise.reject(this.#failure);
		const done = new Promise<{ runId: string; nextSeq: number }>((resolve, reject) => {
			if (this.#runId !== null && this.#everOpened)
				resolve({ runId: this.#runId, nextSeq: this.#nextSeq });
			else this.#startWaiters.push({ resolve, reject });
		});
		if (this.#phase === 'idle') {
			this.#phase = 'running';
			this.#connect();
		}
		return done;
	}

	/**
	 * Queues one frame and returns its seq (null until the run's numbering is known, i.e. before the
	 * first `opened`). Frames are numbered in the order they are given. Throws if the client has
	 * stopped, the local queue is full or the frame is too large to ever be accepted.
	 */
	send(frame: FrameInput): number | null {
		if (this.#failure !== null) throw this.#failure;
		if (this.#phase === 'closed' || this.#closeRequested)
			throw new SkeinClientError('client is closed');
		if (this.#entries.length - this.#head >= this.#o.maxQueued) {
			throw new SkeinClientError(`local queue full (${this.#o.maxQueued} frames unacknowledged)`);
		}
		const entry: Entry = { seq: -1, frame, payload: null };
		if (this.#nextSeq >= 0) {
			entry.seq = this.#nextSeq;
			const problem = this.#encode(entry);
			if (problem !== null) throw problem;
			this.#nextSeq++;
		}
		this.#entries.push(entry);
		this.#pump();
		return entry.seq >= 0 ? entry.seq : null;
	}

	/** Resolves when every frame given so far is acknowledged. */
	flush(): Promise<void> {
		if (this.#failure !== null) return Promise.reject(this.#failure);
		if (this.#entries.length === this.#head) return Promise.resolve();
		return new Promise((resolve, reject) => this.#flushWaiters.push({ resolve, reject }));
	}

	/** Waits until every frame is stored, ends the run and resolves with the server's count. */
	close(): Promise<{ run_id: string; frames: number }> {
		if (this.#failure !== null) return Promise.reject(this.#failure);
		const done = new Promise<{ run_id: string; frames: number }>((resolve, reject) =>
			this.#closeWaiters.push({ resolve, reject })
		);
		this.#closeRequested = true;
		if (this.#phase === 'idle') void this.start().catch(() => {});
		this.#maybeSendClose();
		return done;
	}

	/** Stops at once without ending the run (it becomes interrupted after the server's grace period). */
	abort(): void {
		this.#stop(new SkeinClientError('aborted'));
	}

	#emit(event: RigClientEvent): void {
		for (const fn of this.#listeners) fn(event);
	}

	#connect(): void {
		this.#reconnectTimer = null;
		if (this.#phase !== 'running') return;
		const id = ++this.#connId;
		const ws = new WebSocket(this.#o.url, {
			headers: { Authorization: `Bearer ${this.#o.key}` },
			perMessageDeflate: false,
			handshakeTimeout: 10_000
		});
		this.#ws = ws;
		ws.on('open', () => {
			const open = { type: 'open', client_run_id: this.#o.clientRunId, run: this.#o.run };
			ws.send(encodeMessage(open, this.#o.encoding));
		});
		ws.on('message', (data: RawData, isBinary: boolean) => {
			if (id === this.#connId) this.#receive(data, isBinary);
		});
		ws.on('unexpected-response', (req, res) => {
			const status = res.statusCode ?? 0;
			let body = '';
			res.setEncoding('utf8');
			res.on('data', (chunk: string) => {
				if (body.length < 1000) body += chunk;
			});
			res.on('end', () => {
				req.destroy();
				if (id !== this.#connId) return;
				const reason = body.trim() || `HTTP ${status}`;
				if (status === 401 || status === 403) {
					this.#fail(new SkeinAuthError(`feed key refused: ${reason}`, status));
				} else {
					this.#gone(id, 1006, `upgrade refused: HTTP ${status} ${reason}`);
				}
			});
		});
		ws.on('error', () => {
			// 'close' follows and decides what happens next
		});
		ws.on('close', (code: number, reason: Buffer) => this.#gone(id, code, reason.toString()));
	}

	#receive(data: RawData, isBinary: boolean): void {
		const bytes = Array.isArray(data)
			? Buffer.concat(data)
			: data instanceof ArrayBuffer
				? new Uint8Array(data)
				: data;
		const decoded = decodeMessage(bytes, isBinary);
		if (!decoded.ok) return;
		const m = decoded.msg;
		switch (m.type) {
			case 'opened':
				this.#onOpened(String(m.run_id), Number(m.next_seq), Number(m.window));
				break;
			case 'ack':
				this.#onAck(Number(m.seq));
				break;
			case 'closed':
				this.#onClosed({ type: 'closed', run_id: String(m.run_id), frames: Number(m.frames) });
				break;
			case 'error':
				this.#onError(
					String(m.code) as ErrorCode,
					String(m.message),
					typeof m.seq === 'number' ? m.seq : undefined,
					typeof m.next_seq === 'number' ? m.next_seq : undefined
				);
				break;
		}
	}

	#onOpened(runId: string, nextSeq: number, window: number): void {
		const reconnect = this.#everOpened;
		this.#runId = runId;
		this.#window = window;
		this.#attempt = 0;
		this.#paused = false;
		this.#gapTarget = -1;
		if (this.#nextSeq < 0) {
			// First contact: the numbering starts where the server says, frames queued so far included.
			this.#nextSeq = nextSeq;
			for (let i = this.#head; i < this.#entries.length; i++) {
				const entry = this.#entries[i] as Entry;
				entry.seq = this.#nextSeq++;
				const problem = this.#encode(entry);
				if (problem !== null) {
					this.#fail(problem);
					return;
				}
			}
		}
		if (nextSeq - 1 < this.#acked) {
			this.#fail(
				new SkeinClientError(`server resumed at seq ${nextSeq} but had acknowledged ${this.#acked}`)
			);
			return;
		}
		this.#dropThrough(nextSeq - 1);
		const first = this.#entries[this.#head];
		if (first !== undefined && first.seq > nextSeq) {
			this.#fail(
				new SkeinClientError(`server expects seq ${nextSeq}, which is no longer queued here`)
			);
			return;
		}
		// Frames the server has but this process never numbered (another process used this client_run_id).
		if (nextSeq > this.#nextSeq) this.#nextSeq = nextSeq;
		this.#sendIdx = this.#head;
		this.#opened = true;
		this.#everOpened = true;
		this.#emit({ type: 'opened', runId, nextSeq, window, reconnect });
		const starters = this.#startWaiters;
		this.#startWaiters = [];
		for (const w of starters) w.resolve({ runId, nextSeq });
		this.#pump();
		this.#settleIfEmpty();
	}

	#onAck(seq: number): void {
		if (seq > this.#acked) this.#dropThrough(seq);
		this.#paused = false;
		this.#armWatchdog();
		this.#emit({ type: 'ack', seq });
		this.#pump();
		this.#settleIfEmpty();
	}

	#settleIfEmpty(): void {
		if (this.#entries.length !== this.#head) return;
		const waiters = this.#flushWaiters;
		this.#flushWaiters = [];
		for (const w of waiters) w.resolve();
		this.#maybeSendClose();
	}

	#onError(code: ErrorCode, message: string, seq?: number, nextSeq?: number): void {
		this.#emit({ type: 'server-error', code, message, seq, nextSeq });
		if (code === 'seq_gap' && nextSeq !== undefined && seq !== undefined) {
			// Errors for frames sent before the last rewind to the same point are stale.
			if (nextSeq === this.#gapTarget && seq <= this.#staleUpTo) return;
			this.#rewind(nextSeq);
			this.#pump();
		} else if (code === 'rate_limited' && seq !== undefined) {
			this.#rewind(seq);
			this.#paused = true;
		} else if (code === 'invalid_open') {
			this.#fail(new SkeinClientError(`open refused: ${message}`));
		} else if (code === 'too_large') {
			this.#fail(new SkeinClientError(`server refused a message as too large: ${message}`));
		}
	}

	#onClosed(closed: ClosedMessage): void {
		this.#phase = 'closed';
		this.#clearTimers();
		const waiters = this.#closeWaiters;
		this.#closeWaiters = [];
		for (const w of waiters) w.resolve({ run_id: closed.run_id, frames: closed.frames });
	}

	#rewind(seq: number): void {
		const first = this.#entries[this.#head];
		if (first === undefined || seq < first.seq) return;
		const idx = this.#head + (seq - first.seq);
		if (idx >= this.#sendIdx) return;
		this.#gapTarget = seq;
		this.#staleUpTo = (this.#entries[this.#sendIdx - 1] as Entry).seq;
		this.#sendIdx = idx;
	}

	#dropThrough(seq: number): void {
		this.#acked = Math.max(this.#acked, seq);
		while (this.#head < this.#entries.length) {
			const entry = this.#entries[this.#head] as Entry;
			if (entry.seq < 0 || entry.seq > seq) break;
			this.#entries[this.#head] = undefined;
			this.#head++;
		}
		if (this.#sendIdx < this.#head) this.#sendIdx = this.#head;
		if (this.#head > 1024 && this.#head * 2 > this.#entries.length) {
			this.#entries = this.#entries.slice(this.#head);
			this.#sendIdx -= this.#head;
			this.#head = 0;
		}
	}

	#encode(entry: Entry): Error | null {
		const payload = encodeMessage(
			{ type: 'frame', seq: entry.seq, ...entry.frame },
			this.#o.encoding
		);
		const size = typeof payload === 'string' ? Buffer.byteLength(payload) : payload.length;
		if (size > this.#o.maxMessageBytes) {
			return new SkeinClientError(
				`frame seq ${entry.seq} is ${size} bytes, over the limit of ${this.#o.maxMessageBytes}`
			);
		}
		entry.payload = payload;
		return null;
	}

	#pump(): void {
		const ws = this.#ws;
		if (ws === null || !this.#opened || this.#paused) return;
		const limit = this.#acked + this.#window;
		while (this.#sendIdx < this.#entries.length) {
			const entry = this.#entries[this.#sendIdx] as Entry;
			if (entry.seq > limit) break;
			if (entry.payload === null) {
				const problem = this.#encode(entry);
				if (problem !== null) {
					this.#fail(problem);
					return;
				}
			}
			ws.send(entry.payload as Uint8Array | string);
			this.#sendIdx++;
		}
		if (this.#watchdog === null) this.#armWatchdog();
	}

	#armWatchdog(): void {
		if (this.#watchdog !== null) clearTimeout(this.#watchdog);
		this.#watchdog = null;
		if (!this.#opened || this.#sendIdx === this.#head) return;
		const id = this.#connId;
		this.#watchdog = setTimeout(() => {
			this.#watchdog = null;
			if (id === this.#connId && this.#ws !== null) this.#ws.terminate();
		}, this.#o.ackTimeoutMs);
	}

	#maybeSendClose(): void {
		if (!this.#closeRequested || this.#closeSent || !this.#opened || this.#ws === null) return;
		if (this.#entries.length !== this.#head) return;
		this.#closeSent = true;
		this.#ws.send(encodeMessage({ type: 'close' }, this.#o.encoding));
	}

	#gone(id: number, code: number, reason: string): void {
		if (id !== this.#connId) return;
		this.#connId++;
		this.#ws = null;
		this.#opened = false;
		this.#closeSent = false;
		this.#paused = false;
		this.#clearTimers();
		if (this.#phase !== 'running') return;
		if (code === CloseCode.keyRevoked) {
			this.#fail(new SkeinAuthError(`feed key revoked: ${reason}`, 401));
			return;
		}
		if (code === CloseCode.tooLarge) {
			this.#fail(
				new SkeinClientError(`server closed the connection: message too large (${reason})`)
			);
			return;
		}
		if (code === CloseCode.superseded) {
			this.#fail(
				new SkeinClientError(
					'the run was resumed by another connection with the same client_run_id'
				)
			);
			return;
		}
		const base = Math.min(this.#o.maxMs, this.#o.minMs * 2 ** Math.min(this.#attempt, 30));
		const delay = Math.round(base / 2 + (this.#o.random() * base) / 2);
		this.#attempt++;
		this.#emit({ type: 'disconnected', code, reason, retryInMs: delay });
		this.#reconnectTimer = setTimeout(() => {
			this.#reconnects++;
			this.#connect();
		}, delay);
	}

	#clearTimers(): void {
		if (this.#watchdog !== null) clearTimeout(this.#watchdog);
		if (this.#reconnectTimer !== null) clearTimeout(this.#reconnectTimer);
		this.#watchdog = null;
		this.#reconnectTimer = null;
	}

	#fail(error: Error): void {
		if (this.#stop(error)) this.#emit({ type: 'fatal', error });
	}

	/** Stops for good; false if already stopped. */
	#stop(error: Error): boolean {
		if (this.#phase === 'failed' || this.#phase === 'closed') return false;
		this.#phase = 'failed';
		this.#failure = error;
		this.#clearTimers();
		const ws = this.#ws;
		this.#ws = null;
		this.#connId++;
		this.#opened = false;
		if (ws !== null) ws.terminate();
		for (const w of [...this.#startWaiters, ...this.#flushWaiters, ...this.#closeWaiters])
			w.reject(error);
		this.#startWaiters = [];
		this.#flushWaiters = [];
		this.#closeWaiters = [];
		return true;
	}
}
