/**
 * The viewer socket (docs/live.md): what Skein sends to people watching runs live, shared by the server
 * (server-ws/live) and the browser (src/lib/viewer). Every message is one MessagePack map with a string `type`.
 */
import type { FrameMetrics } from '../metrics/frame';
import type { Coords, RunStatus } from '../runs';
import type { Frame } from './types';

export const LIVE_PROTOCOL = 1;
/** `/live/{runId}` follows one run; `/live` alone is the Live board's summary socket */
export const LIVE_PATH = '/live';
/** summaries per second the board socket sends at most */
export const BOARD_HZ = 4;

/** Close codes of the viewer socket besides the standard ones. */
export const LiveCloseCode = {
	runEnded: 1000,
	goingAway: 1001,
	/** the session was signed out, expired or its person deactivated */
	sessionInvalid: 4401,
	/** the person's role no longer reads runs */
	forbidden: 4403
} as const;

export interface LiveRunInfo {
	id: string;
	name: string;
	rig: string;
	state: RunStatus;
	state_fields: string[];
	measurement_fields: string[];
	coords: Coords;
	/** device time of the first stored frame, s since the epoch; null before the first frame */
	first_t: number | null;
	last_t: number | null;
	frames: number;
}

export interface HelloMessage {
	type: 'hello';
	protocol: number;
	run: LiveRunInfo;
	/** server clock, ms since the epoch */
	now: number;
}

export interface LiveFrameMessage {
	type: 'frame';
	/** frames of this run committed but not sent to this viewer since the previous frame message */
	skipped: number;
	/** messages of this run quarantined since the previous frame message */
	quarantined: number;
	seq: number;
	/** device time, s since the epoch */
	t: number;
	/** server clock when the frame was durable, ms since the epoch */
	committed_at: number;
	frame: Frame;
	/** the stored per-frame metric columns; null when the server did not compute them */
	metrics: FrameMetrics | null;
}

export interface StateMessage {
	type: 'state';
	state: RunStatus;
	/** server clock, ms since the epoch */
	at: number;
}

export interface PongMessage {
	type: 'pong';
	/** the client's `c` from the ping, echoed */
	c: number;
	/** server clock when answering, ms since the epoch */
	s: number;
}

/** One tile of the Live board. */
export interface BoardRun {
	id: string;
	name: string;
	rig: string;
	state: RunStatus;
	seq: number | null;
	t: number | null;
	/** frames per second of device time over the last 2 s */
	fps: number | null;
	/** device time → committed at Skein (server clock) of the newest frame, ms */
	lag_ms: number | null;
	n_measurements: number | null;
	n_estimates: number | null;
	n_truth: number | null;
	gospa: number | null;
	frames: number;
}

/** A tile before any frame was seen by this board. */
export function quietTile(
	run: Pick<LiveRunInfo, 'id' | 'name' | 'rig' | 'state' | 'last_t' | 'frames'>
): BoardRun {
	return {
		id: run.id,
		name: run.name,
		rig: run.rig,
		state: run.state,
		seq: null,
		t: run.last_t,
		fps: null,
		lag_ms: null,
		n_measurements: null,
		n_estimates: null,
		n_truth: null,
		gospa: null,
		frames: run.frames
	};
}

export interface BoardMessage {
	type: 'board';
	now: number;
	runs: BoardRun[];
}

export type LiveServerMessage =
	HelloMessage | LiveFrameMessage | StateMessage | PongMessage | BoardMessage;

/** The only message a viewer sends: a clock probe, answered with `pong`. */
export interface PingMessage {
	type: 'ping';
	/** the client's clock, ms since the epoch */
	c: number;
}
