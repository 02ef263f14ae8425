/**
 * What the ingest socket needs from storage. The socket logic knows nothing about the database;
 * the PostgreSQL implementation lives in src/lib/server/ingest/.
 */
import type { FrameMetrics, MetricFrame } from '$lib/metrics/frame';
import type { Encoding, Frame, IngestRunState, RunSpec } from '$lib/protocol/types';

/** The rig a feed key belongs to. */
export interface RigRef {
	rigId: string;
	keyId: string;
	/** when the key stops working (ms since the epoch); connections on it are closed then */
	expiresAt?: number | null;
}

export type KeyResolution =
	| { ok: true; rig: RigRef }
	/** `reason` is one plain-text line sent with the 401, e.g. "feed key revoked" */
	| { ok: false; reason: string };

export interface OpenRunRequest {
	rig: RigRef;
	/** null: always a new run, which cannot be resumed */
	clientRunId: string | null;
	spec: RunSpec;
}

export type OpenRunResult =
	| {
			ok: true;
			runId: string;
			/** true when an existing run (same rig, same client_run_id) was found */
			resumed: boolean;
			/** the spec stored with the run; on resume it is the first open's spec */
			spec: RunSpec;
			/** 1 + highest seq stored or quarantined; 0 for a new run */
			nextSeq: number;
			/** t of the stored frame with the highest seq, or null when there is none */
			lastT: number | null;
			/** frames stored so far (quarantined ones not counted) */
			frames: number;
			/** the run's state before this open; "live" for a new run */
			state: IngestRunState;
	  }
	/** the run cannot be opened for a reason the rig should read; sent as invalid_open */
	| { ok: false; reason: string };

export interface FrameToStore {
	seq: number;
	t: number;
	/** the MessagePack encoding of the frame map, as the rig sent it when it sent MessagePack */
	raw: Uint8Array;
	/** validated, as the metrics read it; an absent set is undefined, a reported empty set has length 0 */
	frame: MetricFrame;
	/** the whole decoded message when the general path decoded it; null when the fast path read only `frame` */
	decoded: Frame | null;
	/** set by the store when it computes the frame's metric columns; handed on to live viewers */
	metrics?: FrameMetrics;
}

export interface QuarantinedToStore {
	seq: number;
	/** the message exactly as received */
	raw: Uint8Array;
	encoding: Encoding;
	/** e.g. `estimates[3].P: length 15, expected 16` */
	reason: string;
}

/** What a commit did besides storing the frames. */
export interface CommitOutcome {
	/**
	 * Frames of the batch the database refused for what they hold (validation should have caught them): they
	 * were quarantined in the same transaction instead of being stored, each with the database's reason.
	 */
	refused: QuarantinedToStore[];
}

export interface IngestStore {
	/** Unknown, revoked and expired keys resolve to { ok: false }. */
	resolveKey(key: string): Promise<KeyResolution>;

	/**
	 * Creates the run (state live), or finds the rig's run with this client_run_id and reports it
	 * as it is, without changing its state: the session checks it and then calls setRunState.
	 */
	openRun(request: OpenRunRequest): Promise<OpenRunResult>;

	/**
	 * Stores frames and quarantined messages of one run in ONE transaction and resolves once it is
	 * durable. Their seqs together form one contiguous range following what is already stored.
	 * Must be idempotent per (run, seq): a seq already stored is skipped, never duplicated.
	 * Rejecting means storage is unavailable and nothing of the batch was stored (the rig resends it), so a
	 * frame the database refuses for its content must not reject: it is quarantined and reported as refused.
	 */
	commitFrames(
		runId: string,
		frames: FrameToStore[],
		quarantined: QuarantinedToStore[]
	): Promise<CommitOutcome | void>;

	/**
	 * Optional: called as each valid frame is accepted, before it is batched, so a store can do its per-frame
	 * work (derived columns) while the previous batch's commit is waiting on the database.
	 */
	prepareFrame?(runId: string, frame: FrameToStore): void;

	setRunState(runId: string, state: IngestRunState): Promise<void>;

	/** Records that the key was used now, and from where; called once per accepted connection, failures are ignored. */
	touchKey(keyId: string, address: string | null): Promise<void>;
}
