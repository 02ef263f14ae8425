/**
 * Ingest protocol v1 limits and session defaults (docs/protocol.md, "Limits").
 * Every value can be changed per deployment; the defaults are what the docs promise.
 */

export interface IngestLimits {
	/** bytes in one WebSocket message (after decompression, before decoding) */
	maxMessageBytes: number;
	/** items in one set (measurements, estimates, truth) of one frame */
	maxSetSize: number;
	/**
	 * truth objects × estimates in one frame: the pairs GOSPA may have to match. Objects closer than the
	 * cut-off form groups solved one by one, but one group of k × k objects costs about k³, so this bounds
	 * the worst frame (500 × 500, all near each other: about 0.3 s of one core).
	 */
	maxPairs: number;
	/** length of state_fields and of measurement_fields */
	maxDim: number;
	maxFieldNameLength: number;
	maxIdLength: number;
	/** estimate label and measurement sensor */
	maxLabelLength: number;
	maxClientRunIdLength: number;
	maxRunNameLength: number;
	maxTags: number;
	maxTagLength: number;
	maxNotesLength: number;
	/** container nesting of a MessagePack message; a valid frame needs 4 */
	maxDepth: number;
	/**
	 * Relative tolerance of the symmetry check of P and R:
	 * |M[i,j] − M[j,i]| ≤ tol · max(|M[i,j]|, |M[j,i]|, √(|M[i,i]|·|M[j,j]|)).
	 * 1e-6 lets float32 round-off through and nothing a person would call asymmetric.
	 */
	symmetryTolerance: number;
}

export const DEFAULT_LIMITS: Readonly<IngestLimits> = Object.freeze({
	maxMessageBytes: 1024 * 1024,
	maxSetSize: 5000,
	maxPairs: 250_000,
	maxDim: 16,
	maxFieldNameLength: 32,
	maxIdLength: 128,
	maxLabelLength: 64,
	maxClientRunIdLength: 128,
	maxRunNameLength: 200,
	maxTags: 32,
	maxTagLength: 64,
	maxNotesLength: 4000,
	maxDepth: 8,
	symmetryTolerance: 1e-6
});

export interface SessionTiming {
	/** frames a rig may send ahead of the last ack; the protocol guarantees at least MIN_WINDOW */
	window: number;
	/** an ack goes out at least this often while committed frames are unacknowledged */
	ackIntervalMs: number;
	/** how long a dropped run stays live waiting for a resume before it becomes interrupted */
	graceMs: number;
	/** frames arriving within this many ms are committed together */
	batchDelayMs: number;
	/** a batch is committed at once when it reaches this many frames */
	batchMaxFrames: number;
	/** server ping interval; a socket that misses one pong is treated as dropped */
	pingIntervalMs: number;
}

export const MIN_WINDOW = 64;

export const DEFAULT_TIMING: Readonly<SessionTiming> = Object.freeze({
	window: 256,
	ackIntervalMs: 250,
	graceMs: 30_000,
	batchDelayMs: 4,
	batchMaxFrames: 128,
	pingIntervalMs: 15_000
});

export function resolveLimits(overrides?: Partial<IngestLimits>): IngestLimits {
	return { ...DEFAULT_LIMITS, ...overrides };
}

export function resolveTiming(overrides?: Partial<SessionTiming>): SessionTiming {
	const timing = { ...DEFAULT_TIMING, ...overrides };
	if (timing.window < MIN_WINDOW) throw new RangeError(`window must be at least ${MIN_WINDOW}`);
	return timing;
}
