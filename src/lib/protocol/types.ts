/**
 * Ingest protocol v1: the shapes rigs send (see docs/protocol.md).
 * An absent set (undefined) means "not reported in this frame"; an empty array means "reported, and empty".
 */
import type { Coords, RunStatus } from '../runs';

export type ObjectId = string | number;

export interface EgoPose {
	x: number;
	y: number;
	/** radians */
	heading: number;
}

export interface Measurement {
	/** length = run.measurement_fields.length */
	z: number[];
	sensor?: string;
	/** row-major square covariance, length = z.length ** 2 */
	R?: number[];
}

export interface Estimate {
	id?: ObjectId;
	/** length = run.state_fields.length */
	x: number[];
	/** row-major symmetric covariance, length = x.length ** 2 */
	P?: number[];
	/** existence probability in [0, 1] */
	r?: number;
	label?: string;
}

export interface TruthObject {
	id?: ObjectId;
	x: number[];
}

export interface Frame {
	seq: number;
	/** seconds, Unix epoch, device clock */
	t: number;
	ego?: EgoPose;
	measurements?: Measurement[];
	estimates?: Estimate[];
	truth?: TruthObject[];
}

export interface RunSpec {
	name: string;
	state_fields: string[];
	measurement_fields: string[];
	coords?: Coords;
	units?: { length: 'm' };
	tags?: string[];
	notes?: string;
}

/** The path of the ingest endpoint, relative to the web app's origin. */
export const INGEST_PATH = '/ingest/v1';

export type Encoding = 'msgpack' | 'json';

export interface OpenMessage {
	type: 'open';
	/** chosen by the rig; re-sending open with the same value resumes the run */
	client_run_id?: string;
	run: RunSpec;
}

export interface FrameMessage extends Frame {
	type: 'frame';
}

export interface CloseMessage {
	type: 'close';
}

export type ClientMessage = OpenMessage | FrameMessage | CloseMessage;

export interface OpenedMessage {
	type: 'opened';
	run_id: string;
	next_seq: number;
	window: number;
}

export interface AckMessage {
	type: 'ack';
	seq: number;
}

export interface ClosedMessage {
	type: 'closed';
	run_id: string;
	frames: number;
}

export type ErrorCode =
	| 'bad_message'
	| 'invalid_open'
	| 'invalid_frame'
	| 'seq_gap'
	| 'not_open'
	| 'too_large'
	| 'rate_limited';

export interface ErrorMessage {
	type: 'error';
	code: ErrorCode;
	message: string;
	seq?: number;
	/** only with seq_gap */
	next_seq?: number;
}

export type ServerMessage = OpenedMessage | AckMessage | ClosedMessage | ErrorMessage;

/** WebSocket close codes the server uses (docs/protocol.md, "Close codes"). */
export const CloseCode = {
	normal: 1000,
	goingAway: 1001,
	tooLarge: 1009,
	internalError: 1011,
	keyRevoked: 4001,
	superseded: 4002
} as const;

/** The states ingest moves a run between (imported runs never pass through ingest). */
export type IngestRunState = Exclude<RunStatus, 'imported'>;
