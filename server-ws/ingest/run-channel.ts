/**
 * The server-side state of one run being ingested. It outlives the connections that feed it:
 * a rig that drops and resumes finds the same channel, so sequence state, the commit in flight
 * and the grace timer stay consistent across connections. One commit in flight per run.
 */
import type { IngestLimits, SessionTiming } from '../../src/lib/protocol/limits';
import type { Frame, IngestRunState, RunSpec } from '../../src/lib/protocol/types';
import { runDims, type RunDims } from '../../src/lib/protocol/validate';
import { fromMsgpack } from '../../src/lib/protocol/codec';
import type { PubSub, RunEvent } from '../pubsub';
import type {
	FrameToStore,
	IngestStore,
	QuarantinedToStore
} from '../../src/lib/server/ingest/contract';

export interface ChannelDeps {
	store: IngestStore;
	pubsub: PubSub<RunEvent>;
	limits: IngestLimits;
	timing: SessionTiming;
	onError: (error: unknown, context: string) => void;
}

/** What a channel needs from the connection currently feeding it. */
export interface ChannelListener {
	/** every seq up to and including `seq` is now durable */
	committed(seq: number): void;
	/** storage failed; the connection must close so the rig resumes from the stored state */
	storageFailed(): void;
	/** a frame the database refused for its content was quarantined instead (its seq is acknowledged) */
	refused?(entry: QuarantinedToStore): void;
}

export class RunChannel {
	readonly runId: string;
	readonly spec: RunSpec;
	readonly dims: RunDims;
	/** next seq the run accepts: 1 + highest seq received (pending, committed or quarantined) */
	expected: number;
	/** t of the last accepted frame, pending or committed */
	lastT: number | null;
	/** 1 + highest seq durably stored or quarantined */
	committedNext: number;
	/** frames stored (quarantined ones not counted) */
	frames: number;
	state: IngestRunState;
	listener: ChannelListener | null = null;

	#deps: ChannelDeps;
	#committedLastT: number | null;
	#pendingFrames: FrameToStore[] = [];
	#pendingQuarantine: QuarantinedToStore[] = [];
	#committing = false;
	#flushTimer: ReturnType<typeof setTimeout> | null = null;
	#graceTimer: ReturnType<typeof setTimeout> | null = null;
	#idleWaiters: (() => void)[] = [];
	#stateChain: Promise<void> = Promise.resolve();
	#onExpired: (channel: RunChannel) => void;

	constructor(
		deps: ChannelDeps,
		init: {
			runId: string;
			spec: RunSpec;
			nextSeq: number;
			lastT: number | null;
			frames: number;
			state: IngestRunState;
		},
		onExpired: (channel: RunChannel) => void
	) {
		this.#deps = deps;
		this.runId = init.runId;
		this.spec = init.spec;
		this.dims = runDims(init.spec);
		this.expected = init.nextSeq;
		this.committedNext = init.nextSeq;
		this.lastT = init.lastT;
		this.#committedLastT = init.lastT;
		this.frames = init.frames;
		this.state = init.state;
		this.#onExpired = onExpired;
	}

	get pendingCount(): number {
		return this.#pendingFrames.length + this.#pendingQuarantine.length;
	}

	accept(frame: FrameToStore): void {
		this.#deps.store.prepareFrame?.(this.runId, frame);
		this.#pendingFrames.push(frame);
		this.expected = frame.seq + 1;
		this.lastT = frame.t;
		this.#scheduleFlush();
	}

	quarantine(entry: QuarantinedToStore): void {
		this.#pendingQuarantine.push(entry);
		this.expected = entry.seq + 1;
		this.#scheduleFlush();
	}

	#scheduleFlush(): void {
		if (this.pendingCount >= this.#deps.timing.batchMaxFrames) {
			this.#pump();
		} else if (this.#flushTimer === null && !this.#committing) {
			this.#flushTimer = setTimeout(() => this.#pump(), this.#deps.timing.batchDelayMs);
		}
	}

	#pump(): void {
		if (this.#flushTimer !== null) {
			clearTimeout(this.#flushTimer);
			this.#flushTimer = null;
		}
		if (this.#committing) return;
		if (this.pendingCount === 0) {
			this.#notifyIdle();
			return;
		}
		const frames = this.#pendingFrames;
		const quarantined = this.#pendingQuarantine;
		this.#pendingFrames = [];
		this.#pendingQuarantine = [];
		const last = this.expected - 1;
		this.#committing = true;
		this.#deps.store.commitFrames(this.runId, frames, quarantined).then(
			(outcome) => {
				this.#committing = false;
				const refused = outcome?.refused ?? [];
				let storedFrames = frames;
				if (refused.length > 0) {
					const seqs = new Set(refused.map((q) => q.seq));
					storedFrames = frames.filter((f) => !seqs.has(f.seq));
				}
				this.committedNext = last + 1;
				this.frames += storedFrames.length;
				if (storedFrames.length > 0) this.#committedLastT = storedFrames[storedFrames.length - 1].t;
				// a refused frame's t does not count, as for any quarantined frame
				if (refused.length > 0 && this.#pendingFrames.length === 0)
					this.lastT = this.#committedLastT;
				for (const q of refused) this.listener?.refused?.(q);
				this.listener?.committed(last);
				this.#publishCommitted(storedFrames, [...quarantined, ...refused]);
				this.#pump();
			},
			(error: unknown) => {
				this.#committing = false;
				this.#deps.onError(error, `commit of run ${this.runId} failed`);
				// Nothing of the batch is stored: forget everything not yet durable, the rig resends it.
				this.#pendingFrames = [];
				this.#pendingQuarantine = [];
				this.expected = this.committedNext;
				this.lastT = this.#committedLastT;
				this.listener?.storageFailed();
				this.#notifyIdle();
			}
		);
	}

	#publishCommitted(frames: FrameToStore[], quarantined: QuarantinedToStore[]): void {
		const { pubsub } = this.#deps;
		for (const q of quarantined) {
			pubsub.publish(this.runId, {
				kind: 'quarantined',
				runId: this.runId,
				seq: q.seq,
				reason: q.reason
			});
		}
		for (const f of frames) {
			let decoded = f.decoded;
			pubsub.publish(this.runId, {
				kind: 'frame',
				runId: this.runId,
				seq: f.seq,
				t: f.t,
				// frames the fast path read are decoded only if someone watching needs them
				get frame(): Frame {
					return (decoded ??= fromMsgpack(f.raw) as Frame);
				},
				metrics: f.metrics ?? null
			});
		}
	}

	#notifyIdle(): void {
		if (this.#committing || this.pendingCount > 0) return;
		const waiters = this.#idleWaiters;
		this.#idleWaiters = [];
		for (const w of waiters) w();
	}

	/** Resolves when everything received so far is committed (or was dropped by a failed commit). */
	idle(): Promise<void> {
		if (!this.#committing && this.pendingCount === 0) return Promise.resolve();
		if (!this.#committing) this.#pump();
		return new Promise((resolve) => this.#idleWaiters.push(resolve));
	}

	/** State changes of one run reach the store in the order they were made. */
	setState(state: IngestRunState): Promise<void> {
		this.state = state;
		const write = this.#stateChain.then(() => this.#deps.store.setRunState(this.runId, state));
		this.#stateChain = write.catch((error: unknown) => {
			this.#deps.onError(error, `setting run ${this.runId} ${state} failed`);
		});
		this.#deps.pubsub.publish(this.runId, { kind: 'state', runId: this.runId, state });
		return write;
	}

	/** Waits for state writes already made (e.g. "interrupted" from an expiring grace period). */
	settled(): Promise<void> {
		return this.#stateChain;
	}

	startGrace(): void {
		this.cancelGrace();
		this.#graceTimer = setTimeout(() => {
			this.#graceTimer = null;
			void this.expire();
		}, this.#deps.timing.graceMs);
	}

	cancelGrace(): void {
		if (this.#graceTimer !== null) {
			clearTimeout(this.#graceTimer);
			this.#graceTimer = null;
		}
	}

	/** No connection resumed in time (or the server is stopping): the run becomes interrupted. */
	async expire(): Promise<void> {
		this.cancelGrace();
		await this.idle();
		if (this.listener !== null || this.state !== 'live') return;
		await this.setState('interrupted').catch(() => {});
		// A rig may have resumed (and dropped again) while the state was being written.
		if (this.listener === null && this.#graceTimer === null && this.#unclaimed())
			this.#onExpired(this);
	}

	#unclaimed(): boolean {
		return this.state === 'interrupted';
	}

	static sameFields(a: RunSpec, b: RunSpec): boolean {
		return (
			sameList(a.state_fields, b.state_fields) &&
			sameList(a.measurement_fields, b.measurement_fields)
		);
	}
}

function sameList(a: readonly string[], b: readonly string[]): boolean {
	if (a.length !== b.length) return false;
	for (let i = 0; i < a.length; i++) if (a[i] !== b[i]) return false;
	return true;
}
