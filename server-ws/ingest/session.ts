/**
 * One ingest connection: decode → validate → sequence rules → batch into the run's channel → ack.
 * Knows nothing about sockets beyond {@link SessionTransport}, so it can be driven directly.
 */
import {
	decodeMessage,
	encodeMessage,
	storedFrameBytes,
	type Decoded
} from '../../src/lib/protocol/codec';
import {
	CloseCode,
	type Encoding,
	type ErrorCode,
	type ServerMessage
} from '../../src/lib/protocol/types';
import { readFrame } from '../../src/lib/protocol/frame-reader';
import { formatIssue, readSeq, validateFrame, validateOpen } from '../../src/lib/protocol/validate';
import { RunChannel, type ChannelDeps, type ChannelListener } from './run-channel';
import type { QuarantinedToStore, RigRef } from '../../src/lib/server/ingest/contract';

export interface SessionTransport {
	send(data: Uint8Array | string): void;
	close(code: number, reason: string): void;
}

export interface SessionContext extends ChannelDeps {
	/** channels of the runs this process is ingesting, by run id */
	runs: Map<string, RunChannel>;
}

type DecodedOk = Extract<Decoded, { ok: true }>;

type SessionState = 'ready' | 'opening' | 'open' | 'closing' | 'gone';

export class IngestSession implements ChannelListener {
	readonly rig: RigRef;
	#ctx: SessionContext;
	#transport: SessionTransport;
	#state: SessionState = 'ready';
	#channel: RunChannel | null = null;
	#clientRunId: string | null = null;
	#ackEncoding: Encoding = 'msgpack';
	#lastAckSent = -1;
	#ackTimer: ReturnType<typeof setInterval> | null = null;
	#reackQueued = false;

	constructor(ctx: SessionContext, rig: RigRef, transport: SessionTransport) {
		this.#ctx = ctx;
		this.rig = rig;
		this.#transport = transport;
	}

	get runId(): string | null {
		return this.#channel?.runId ?? null;
	}

	/** One WebSocket message; `binary` tells MessagePack from JSON. */
	receive(data: Uint8Array, binary: boolean): void {
		if (this.#state === 'gone') return;
		const encoding: Encoding = binary ? 'msgpack' : 'json';
		const { limits } = this.#ctx;
		if (data.length > limits.maxMessageBytes) {
			this.#sendError(
				encoding,
				'too_large',
				`message of ${data.length} bytes is over the limit of ${limits.maxMessageBytes} bytes`
			);
			this.end(CloseCode.tooLarge, 'message too large');
			return;
		}
		const ch = this.#channel;
		if (binary && ch !== null && this.#state === 'open') {
			// the fast path: a valid MessagePack frame is read straight from its bytes; anything else is decided below
			const read = readFrame(data, ch.dims, limits);
			if (read !== null) {
				this.#ackEncoding = 'msgpack';
				if (this.#sequenced(ch, read.seq, 'msgpack')) {
					const back = timeWentBack(ch, read.t);
					if (back !== null) this.#quarantine(ch, data, 'msgpack', read.seq, back);
					else ch.accept({ seq: read.seq, t: read.t, raw: data, frame: read, decoded: null });
				}
				return;
			}
		}
		const decoded = decodeMessage(data, binary, limits.maxDepth);
		if (!decoded.ok) {
			this.#sendError(encoding, 'bad_message', decoded.reason);
			return;
		}
		const type = decoded.msg.type;
		if (type === 'frame') this.#frame(decoded);
		else if (type === 'open') void this.#open(decoded);
		else if (type === 'close') void this.#close(decoded);
		else if (typeof type === 'string') {
			this.#sendError(encoding, 'bad_message', `unknown message type "${type.slice(0, 40)}"`);
		} else {
			this.#sendError(encoding, 'bad_message', 'field "type" missing or not a string');
		}
	}

	#frame(d: DecodedOk): void {
		const ch = this.#channel;
		const msg = d.msg;
		const seq = readSeq(msg);
		if (ch === null || this.#state !== 'open') {
			const message =
				this.#state === 'closing' ? 'the run is closing' : 'send open and wait for opened first';
			this.#sendError(d.encoding, 'not_open', message, seq ?? undefined);
			return;
		}
		this.#ackEncoding = d.encoding;
		if (seq === null) {
			const checked = validateFrame(msg, ch.dims, this.#ctx.limits);
			const message = checked.ok ? 'seq: missing' : formatIssue(checked);
			this.#sendError(d.encoding, 'invalid_frame', message);
			return;
		}
		if (!this.#sequenced(ch, seq, d.encoding)) return;
		const checked = validateFrame(msg, ch.dims, this.#ctx.limits);
		if (!checked.ok) {
			this.#quarantine(ch, d.raw, d.encoding, seq, formatIssue(checked));
			return;
		}
		const frame = checked.value;
		const back = timeWentBack(ch, frame.t);
		if (back !== null) {
			this.#quarantine(ch, d.raw, d.encoding, seq, back);
			return;
		}
		ch.accept({ seq, t: frame.t, raw: storedFrameBytes(d), frame, decoded: frame });
	}

	/** The sequence rules: true when `seq` is the next one and within the window; otherwise answered here. */
	#sequenced(ch: RunChannel, seq: number, encoding: Encoding): boolean {
		if (seq < ch.expected) {
			// Already received; acknowledged now if durable, else by the ack that follows its commit.
			if (seq < ch.committedNext) this.#reackSoon();
			return false;
		}
		if (seq > ch.expected) {
			this.#send(encoding, {
				type: 'error',
				code: 'seq_gap',
				message: `expected seq ${ch.expected}, got ${seq}`,
				seq,
				next_seq: ch.expected
			});
			return false;
		}
		const window = this.#ctx.timing.window;
		if (seq > ch.committedNext - 1 + window) {
			this.#sendError(
				encoding,
				'rate_limited',
				`seq ${seq} is more than ${window} frames ahead of the last ack; resend after the next ack`,
				seq
			);
			return false;
		}
		return true;
	}

	/** `raw`: the message as received. */
	#quarantine(
		ch: RunChannel,
		raw: Uint8Array,
		encoding: Encoding,
		seq: number,
		reason: string
	): void {
		ch.quarantine({ seq, raw, encoding, reason });
		this.#sendError(encoding, 'invalid_frame', reason, seq);
	}

	async #open(d: DecodedOk): Promise<void> {
		const { limits, store, runs } = this.#ctx;
		if (this.#state === 'opening' || this.#state === 'closing') {
			this.#sendError(d.encoding, 'invalid_open', 'an open or close is already in progress');
			return;
		}
		const checked = validateOpen(d.msg, limits);
		if (!checked.ok) {
			this.#sendError(d.encoding, 'invalid_open', formatIssue(checked));
			return;
		}
		const clientRunId = checked.value.client_run_id ?? null;
		const current = this.#channel;
		if (this.#state === 'open' && current !== null) {
			if (clientRunId === null || clientRunId !== this.#clientRunId) {
				this.#sendError(
					d.encoding,
					'invalid_open',
					'a run is already open on this connection; close it first'
				);
				return;
			}
			this.#state = 'opening';
			await current.idle();
			if (this.#state !== 'opening') return;
			this.#state = 'open';
			this.#sendOpened(d.encoding, current);
			return;
		}

		this.#state = 'opening';
		const spec = checked.value.run;
		let result;
		try {
			result = await store.openRun({ rig: this.rig, clientRunId, spec });
		} catch (error) {
			this.#ctx.onError(error, 'openRun failed');
			this.end(CloseCode.internalError, 'storage unavailable');
			return;
		}
		if (this.#state !== 'opening') return;
		if (!result.ok) {
			this.#state = 'ready';
			this.#sendError(d.encoding, 'invalid_open', result.reason);
			return;
		}
		if (result.state === 'ended') {
			this.#state = 'ready';
			this.#sendError(
				d.encoding,
				'invalid_open',
				'this run has ended; open a new run with another client_run_id'
			);
			return;
		}
		if (result.resumed && !RunChannel.sameFields(result.spec, spec)) {
			this.#state = 'ready';
			this.#sendError(
				d.encoding,
				'invalid_open',
				'run.state_fields and run.measurement_fields must equal those of the run being resumed'
			);
			return;
		}

		let ch = runs.get(result.runId);
		if (ch === undefined) {
			ch = new RunChannel(
				this.#ctx,
				{
					runId: result.runId,
					spec: result.spec,
					nextSeq: result.nextSeq,
					lastT: result.lastT,
					frames: result.frames,
					state: result.state
				},
				(expired) => {
					if (runs.get(expired.runId) === expired) runs.delete(expired.runId);
				}
			);
			runs.set(result.runId, ch);
		}
		ch.cancelGrace();
		const previous = ch.listener;
		ch.listener = this;
		this.#channel = ch;
		if (previous instanceof IngestSession && previous !== this) previous.#superseded();

		try {
			await ch.idle();
			await ch.settled();
			if (ch.listener !== this || this.#state !== 'opening') return;
			if (ch.state !== 'live') await ch.setState('live');
		} catch (error) {
			this.#ctx.onError(error, 'marking run live failed');
			this.end(CloseCode.internalError, 'storage unavailable');
			return;
		}
		if (ch.listener !== this || this.#state !== 'opening') return;
		this.#clientRunId = clientRunId;
		this.#state = 'open';
		this.#ackEncoding = d.encoding;
		this.#lastAckSent = ch.committedNext - 1;
		this.#ackTimer ??= setInterval(() => this.#ackTick(), this.#ctx.timing.ackIntervalMs);
		this.#sendOpened(d.encoding, ch);
	}

	#sendOpened(encoding: Encoding, ch: RunChannel): void {
		this.#send(encoding, {
			type: 'opened',
			run_id: ch.runId,
			next_seq: ch.committedNext,
			window: this.#ctx.timing.window
		});
	}

	async #close(d: DecodedOk): Promise<void> {
		const ch = this.#channel;
		if (ch === null || this.#state !== 'open') {
			this.#sendError(d.encoding, 'not_open', 'no run is open on this connection');
			return;
		}
		this.#state = 'closing';
		await ch.idle();
		if (this.#state !== 'closing' || ch.listener !== this) return;
		try {
			await ch.setState('ended');
		} catch {
			this.end(CloseCode.internalError, 'storage unavailable');
			return;
		}
		if (this.#state !== 'closing') return;
		this.#sendAck(false);
		this.#send(d.encoding, { type: 'closed', run_id: ch.runId, frames: ch.frames });
		ch.listener = null;
		if (this.#ctx.runs.get(ch.runId) === ch) this.#ctx.runs.delete(ch.runId);
		this.#channel = null;
		this.end(CloseCode.normal, 'run closed');
	}

	committed(_seq: number): void {
		if (this.#state === 'open' || this.#state === 'closing') this.#sendAck(false);
	}

	storageFailed(): void {
		this.end(CloseCode.internalError, 'storage unavailable');
	}

	refused(entry: QuarantinedToStore): void {
		if (this.#state === 'open' || this.#state === 'closing')
			this.#sendError(this.#ackEncoding, 'invalid_frame', entry.reason, entry.seq);
	}

	#ackTick(): void {
		const ch = this.#channel;
		if (ch === null || this.#state !== 'open') return;
		// Keep acking while anything consumed is not acknowledged yet, even if nothing new is durable.
		if (ch.expected - 1 > this.#lastAckSent) this.#sendAck(true);
	}

	#reackSoon(): void {
		if (this.#reackQueued) return;
		this.#reackQueued = true;
		setImmediate(() => {
			this.#reackQueued = false;
			if (this.#state === 'open' || this.#state === 'closing') this.#sendAck(true);
		});
	}

	#sendAck(force: boolean): void {
		const ch = this.#channel;
		if (ch === null) return;
		const seq = ch.committedNext - 1;
		if (seq < 0 || (!force && seq === this.#lastAckSent)) return;
		this.#lastAckSent = seq;
		this.#send(this.#ackEncoding, { type: 'ack', seq });
	}

	#sendError(encoding: Encoding, code: ErrorCode, message: string, seq?: number): void {
		this.#send(
			encoding,
			seq === undefined ? { type: 'error', code, message } : { type: 'error', code, message, seq }
		);
	}

	#send(encoding: Encoding, msg: ServerMessage): void {
		if (this.#state === 'gone') return;
		this.#transport.send(encodeMessage(msg, encoding));
	}

	/** Another connection resumed this run: this one stops feeding it and is closed. */
	#superseded(): void {
		this.#channel = null;
		this.end(CloseCode.superseded, 'run resumed on another connection');
	}

	/** Closes the connection from the server side (revocation, storage failure, shutdown…). */
	end(code: number, reason: string): void {
		if (this.#state === 'gone') return;
		this.#transport.close(code, reason);
		this.disconnected();
	}

	/** The connection is gone, however it went: the run waits for a resume during the grace period. */
	disconnected(): void {
		if (this.#state === 'gone') return;
		this.#state = 'gone';
		if (this.#ackTimer !== null) clearInterval(this.#ackTimer);
		this.#ackTimer = null;
		const ch = this.#channel;
		this.#channel = null;
		if (ch !== null && ch.listener === this) {
			ch.listener = null;
			ch.startGrace();
		}
	}
}

/** Why a frame at time `t` cannot follow the run's last one, or null when it can (t never decreases). */
function timeWentBack(ch: RunChannel, t: number): string | null {
	return ch.lastT !== null && t < ch.lastT
		? `t: ${t} is before the previous frame's t ${ch.lastT}`
		: null;
}
