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

interface Accumulated {
	settings: string;
	acc: RunSummaryAccumulator;
	/** frames added, and the seq after the last one */
	frames: number;
	nextSeq: number;
}

/**
 * The accumulators of the last summaries computed, by run (most recent last). A live run's summary is asked
 * for again and again as it grows: the next computation adds only the frames stored since.
 */
const accumulated = new Map<string, Accumulated>();
const KEEP_ACCUMULATED = 16;
let framesRead = 0;

/** Frames read by summary computations in this process so far (a test checks a growing run is read once). */
export function summaryFramesRead(): number {
	return framesRead;
}

/**
 * One pass over the run's frames up to run.nextSeq, a batch at a time; when this process computed the run's
 * summary before with the same settings, only the frames after that one are read.
 */
export async function computeSummary(run: MetricRun): Promise<RunSummary> {
	const settings = canonicalJson(run.settings);
	let entry = accumulated.get(run.id);
	// taken out while in use: a concurrent computation for the run starts its own
	accumulated.delete(run.id);
	if (!entry || entry.settings !== settings || entry.nextSeq > run.nextSeq) {
		entry = { settings, acc: new RunSummaryAccumulator(frameContext(run)), frames: 0, nextSeq: 0 };
	}
	const range = { fromSeq: entry.nextSeq, toSeq: run.nextSeq - 1 };
	if (range.fromSeq <= range.toSeq) {
		for await (const batch of storedFrames(run, range)) {
			framesRead += batch.length;
			for (const { seq, frame } of batch) {
				entry.acc.add(frame);
				entry.frames++;
				entry.nextSeq = seq + 1;
			}
		}
	}
	entry.nextSeq = Math.max(entry.nextSeq, run.nextSeq);
	// frames removed meanwhile (retention) or counted differently: start again from the stored frames
	if (entry.frames !== run.frameCount && entry.frames !== 0) {
		const fresh = new RunSummaryAccumulator(frameContext(run));
		for await (const batch of storedFrames(run, { toSeq: run.nextSeq - 1 })) {
			framesRead += batch.length;
			for (const { frame } of batch) fresh.add(frame);
		}
		return fresh.result();
	}
	accumulated.set(run.id, entry);
	while (accumulated.size > KEEP_ACCUMULATED) accumulated.delete(accumulated.keys().next().value!);
	return entry.acc.result();
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
