/**
 * The run summary: computed from the stored frames (track figures need the sets, so every frame is
 * decoded) and cached in runs.summary with the settings and frame count it was computed from.
 * A cached summary is used while both still match; otherwise it is computed again.
 */
import { RunSummaryAccumulator, type MetricSettings, type RunSummary } from '$lib/metrics';
import { sqlClient } from '$server/db';
import { frameContext, storedFrames, type MetricRun } from './run';

export interface CachedSummary {
	/** bumped when the shape of `summary` changes, so old caches are recomputed */
	format: number;
	settings: MetricSettings;
	frames: number;
	next_seq: number;
	computed_at: string;
	summary: RunSummary;
}

export interface SummaryUnits {
	length: string;
	time: 's';
	gospa: string;
	gospa_localization: string;
	ospa: string;
	motp: string;
	confirmation_latency: 's';
	false_track_lifetime: 's';
	cardinality: 'objects';
	nees: 'dimensionless';
	zones: 'probability';
}

const FORMAT = 1;

/** Keys sorted at every level, so settings compare equal however jsonb reordered them. */
export function canonicalJson(value: unknown): string {
	if (Array.isArray(value)) return `[${value.map(canonicalJson).join(',')}]`;
	if (value !== null && typeof value === 'object') {
		const entries = Object.entries(value)
			.filter(([, v]) => v !== undefined)
			.sort(([a], [b]) => (a < b ? -1 : a > b ? 1 : 0));
		return `{${entries.map(([k, v]) => `${JSON.stringify(k)}:${canonicalJson(v)}`).join(',')}}`;
	}
	return JSON.stringify(value);
}

export function isFresh(cached: unknown, run: MetricRun): cached is CachedSummary {
	if (cached === null || typeof cached !== 'object') return false;
	const c = cached as Partial<CachedSummary>;
	return (
		c.format === FORMAT &&
		c.frames === run.frameCount &&
		c.next_seq === run.nextSeq &&
		canonicalJson(c.settings) === canonicalJson(run.settings)
	);
}

export function summaryUnits(lengthUnit: string, p: number): SummaryUnits {
	return {
		length: lengthUnit,
		time: 's',
		gospa: lengthUnit,
		gospa_localization: p === 1 ? lengthUnit : `${lengthUnit}^${p}`,
		ospa: lengthUnit,
		motp: lengthUnit,
		confirmation_latency: 's',
		false_track_lifetime: 's',
		cardinality: 'objects',
		nees: 'dimensionless',
		zones: 'probability'
	};
}

/** One pass over the run's frames, a batch at a time. */
export async function computeSummary(run: MetricRun): Promise<RunSummary> {
	const acc = new RunSummaryAccumulator(frameContext(run));
	for await (const batch of storedFrames(run, {})) for (const { frame } of batch) acc.add(frame);
	return acc.result();
}

const inFlight = new Map<string, Promise<{ cached: CachedSummary; fresh: boolean }>>();

/**
 * The cached summary when it still matches the run's settings and frames, else a new one (stored
 * back). Concurrent callers for one run share one computation.
 */
export function runSummary(run: MetricRun): Promise<{ cached: CachedSummary; fresh: boolean }> {
	const key = `${run.id}:${run.frameCount}:${run.nextSeq}:${canonicalJson(run.settings)}`;
	let pending = inFlight.get(key);
	if (!pending) {
		pending = summaryOnce(run).finally(() => inFlight.delete(key));
		inFlight.set(key, pending);
	}
	return pending;
}

/** The cached summary if it still matches the run, else null; one small read. */
export async function freshSummary(run: MetricRun): Promise<CachedSummary | null> {
	const [row] = await sqlClient()<
		{ summary: unknown }[]
	>`select summary from runs where id = ${run.id}`;
	return row && isFresh(row.summary, run) ? row.summary : null;
}

async function summaryOnce(run: MetricRun): Promise<{ cached: CachedSummary; fresh: boolean }> {
	const sql = sqlClient();
	const hit = await freshSummary(run);
	if (hit) return { cached: hit, fresh: false };
	const cached: CachedSummary = {
		format: FORMAT,
		settings: run.settings,
		frames: run.frameCount,
		next_seq: run.nextSeq,
		computed_at: new Date().toISOString(),
		summary: await computeSummary(run)
	};
	// Frames that arrived meanwhile make this cache stale at once, and the next request recomputes.
	await sql`update runs set summary = ${JSON.stringify(cached)}::text::jsonb where id = ${run.id}`;
	return { cached, fresh: true };
}
