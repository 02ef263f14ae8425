/**
 * What the JSON API answers, shared by the endpoints (which build these) and the browser (which reads them):
 * a shape is declared here once and never copied on either side.
 */
import type { MetricSettings } from '$lib/metrics/settings';
import type { Frame } from '$lib/protocol/types';
import type { Coords, RunStatus } from '$lib/runs';

/** The one error shape of every API route (built by src/lib/server/api.ts). */
export interface ApiErrorBody {
	error: {
		code: string;
		message: string;
		/** for `invalid`: a message per field path */
		details?: Record<string, string>;
	};
}

/** A run as every server module reads it and `GET /api/runs/{id}` answers it. Times are ISO 8601. */
export interface Run {
	id: string;
	rig_id: string;
	rig_name: string;
	/** the rig's own id for the run, which makes it resumable; null for runs that cannot be resumed */
	client_run_id: string | null;
	name: string;
	state_fields: string[];
	measurement_fields: string[];
	coords: Coords;
	length_unit: string;
	tags: string[];
	notes: string;
	status: RunStatus;
	/** when the run was opened at Skein */
	started_at: string;
	/** device time of the first frame, or when the run was opened before there is one */
	recorded_at: string;
	ended_at: string | null;
	/** device time of the first and the last stored frame, s since the epoch; null before the first frame */
	first_t: number | null;
	last_t: number | null;
	/** 1 + the highest seq stored or quarantined */
	next_seq: number;
	frame_count: number;
	quarantine_count: number;
	/** kept runs survive retention (pins mark runs kept) */
	kept: boolean;
	/** the metric settings as stored (null: none saved); the metrics endpoints answer them checked */
	metric_settings: Record<string, unknown> | null;
	/** last_t − first_t; null before two frames */
	duration_s: number | null;
	frame_rate_hz: number | null;
}

/** `GET /api/runs/{id}` */
export interface RunResponse {
	run: Run;
}

/** A row of `GET /api/runs`: the run and the mean of its stored per-frame GOSPA. */
export interface RunListItem extends Run {
	gospa_mean: number | null;
}

/** `GET /api/runs`: one page, and how many runs match in all. */
export interface RunList {
	total: number;
	runs: RunListItem[];
}

/** The tags and rigs the Runs table offers as filters. */
export interface RunFacets {
	tags: string[];
	rigs: { id: string; name: string }[];
}

/** The per-frame metric columns `GET /api/runs/{id}/series` downsamples. */
export const seriesColumns = [
	'n_measurements',
	'n_estimates',
	'n_truth',
	'expected_cardinality',
	'cardinality_sd',
	'gospa',
	'gospa_localization',
	'gospa_missed',
	'gospa_false',
	'ospa',
	'nees_mean'
] as const;
export type SeriesColumn = (typeof seriesColumns)[number];

export interface SeriesBucketStats {
	min: (number | null)[];
	max: (number | null)[];
	mean: (number | null)[];
}

export interface RunSeries {
	/** seconds from the run's first frame */
	from: number;
	to: number;
	width: number;
	/** start of each bucket (seconds from run start); empty buckets are left out */
	t: number[];
	/** frames in each bucket */
	frames: number[];
	columns: Record<SeriesColumn, SeriesBucketStats>;
	zones: Record<string, SeriesBucketStats>;
}

/** `GET /api/runs/{id}/series`; null before the run's first frame */
export interface SeriesResponse {
	series: RunSeries | null;
}

/** `GET /api/runs/{id}/frames` (JSON or MessagePack): frames as the rig sent them, without the message's `type`. */
export interface FramePage {
	frames: Frame[];
	/** the seq to ask for next; null when this page reached the end of the range */
	next_from_seq: number | null;
}

/** A message of `GET /api/runs/{id}/quarantine`: what was received, and why it was not stored as a frame. */
export interface QuarantinedMessage {
	id: number;
	seq: number | null;
	received_at: string;
	reason: string;
	bytes: number;
	raw_base64: string;
}

export interface QuarantineResponse {
	quarantine: QuarantinedMessage[];
}

export type RecomputeState = 'idle' | 'queued' | 'running' | 'done' | 'failed';

/** Where the recompute of a run's stored metric columns stands (`recompute` of `/api/runs/{id}/settings`). */
export interface RecomputeStatus {
	state: RecomputeState;
	/** 0–100 */
	progress: number;
	error?: string;
	updated_at?: string;
}

/** `GET /api/runs/{id}/settings`; `PUT` answers `settings` and `recompute`. */
export interface RunSettingsResponse {
	/** the run's checked settings, the defaults when none (or none that still validate) are stored */
	settings: MetricSettings;
	defaults: MetricSettings;
	state_fields: string[];
	unit: string;
	recompute: RecomputeStatus;
}

/** Per-viewer figures of the live endpoint, for operators and the tests. */
export interface LiveViewerStats {
	run: string | null;
	/** messages waiting to be sent to this viewer: never more than one frame plus a state and a pong */
	pending: number;
	/** bytes ws has not handed to the kernel yet */
	buffered: number;
	sent: number;
	skipped: number;
}

/** `GET /api/live` */
export interface LiveStats {
	viewers: LiveViewerStats[];
}
