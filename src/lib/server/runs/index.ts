/**
 * Reading runs: one run, the live ones, and the Runs table's search, all as the one `Run` shape
 * ($lib/api-types), through the Drizzle schema.
 */
import { and, desc, eq, ilike, or, sql, type SQL } from 'drizzle-orm';
import type { Run, RunFacets, RunList, RunListItem } from '$lib/api-types';
import type { RunStatus } from '$lib/runs';
import { db, frames, schema } from '$server/db';

const { runs, rigs } = schema;

/** device time of the first frame, or when the run was opened */
const recordedAt = sql<Date>`coalesce(to_timestamp(${runs.firstT}), ${runs.startedAt})`.mapWith(
	runs.startedAt
);

const runColumns = {
	id: runs.id,
	rig_id: runs.rigId,
	rig_name: rigs.name,
	client_run_id: runs.clientRunId,
	name: runs.name,
	state_fields: runs.stateFields,
	measurement_fields: runs.measurementFields,
	coords: runs.coords,
	length_unit: runs.lengthUnit,
	tags: runs.tags,
	notes: runs.notes,
	status: runs.status,
	started_at: runs.startedAt,
	recorded_at: recordedAt,
	ended_at: runs.endedAt,
	first_t: runs.firstT,
	last_t: runs.lastT,
	next_seq: runs.nextSeq,
	frame_count: runs.frameCount,
	quarantine_count: runs.quarantineCount,
	kept: runs.kept,
	metric_settings: runs.metricSettings
};

const runQuery = () => db().select(runColumns).from(runs).innerJoin(rigs, eq(rigs.id, runs.rigId));
type RunRow = Awaited<ReturnType<typeof runQuery>>[number];

function present(row: RunRow): Run {
	const duration = row.first_t !== null && row.last_t !== null ? row.last_t - row.first_t : null;
	return {
		...row,
		started_at: row.started_at.toISOString(),
		recorded_at: row.recorded_at.toISOString(),
		ended_at: row.ended_at?.toISOString() ?? null,
		duration_s: duration,
		frame_rate_hz: duration && duration > 0 ? (row.frame_count - 1) / duration : null
	};
}

const total = sql<number>`count(*) over ()`.mapWith(Number);

/** Live runs first, then the newest. */
const liveFirst = desc(sql`${runs.status} = 'live'`);

export async function getRun(id: string): Promise<Run | null> {
	return findRun(eq(runs.id, id));
}

/** The run matching `where` (a condition on the runs table), or null. */
export async function findRun(where: SQL | undefined): Promise<Run | null> {
	const [row] = await runQuery().where(where);
	return row ? present(row) : null;
}

export interface RunListFilter {
	rigId?: string;
	status?: RunStatus;
	limit: number;
	offset: number;
}

export async function listRuns(f: RunListFilter): Promise<{ total: number; runs: Run[] }> {
	const rows = await db()
		.select({ ...runColumns, total })
		.from(runs)
		.innerJoin(rigs, eq(rigs.id, runs.rigId))
		.where(
			and(
				f.rigId === undefined ? undefined : eq(runs.rigId, f.rigId),
				f.status === undefined ? undefined : eq(runs.status, f.status)
			)
		)
		.orderBy(liveFirst, desc(runs.startedAt))
		.limit(f.limit)
		.offset(f.offset);
	return {
		total: rows.length ? rows[0].total : 0,
		runs: rows.map(({ total: _t, ...r }) => present(r))
	};
}

// ── Runs table: search with filters, sort and a GOSPA mean per run ──

export interface RunSearchFilter extends RunListFilter {
	tag?: string;
	q?: string;
	/** YYYY-MM-DD, inclusive, UTC */
	since?: string;
	until?: string;
	sort?: 'started' | 'name' | 'rig' | 'duration' | 'frames' | 'gospa';
	dir?: 'asc' | 'desc';
}

/** Live runs always come first; then the chosen order. GOSPA mean comes from the stored per-frame values. */
export async function searchRuns(f: RunSearchFilter): Promise<RunList> {
	const gm = db()
		.select({ gospaMean: sql<number | null>`avg(${frames.gospa})`.as('gospa_mean') })
		.from(frames)
		.where(eq(frames.runId, runs.id))
		.as('gm');
	const sortBy: Record<NonNullable<RunSearchFilter['sort']>, SQL> = {
		// the device time of the first frame: a run recorded last week and uploaded today started last week
		started: sql`${recordedAt}`,
		name: sql`lower(${runs.name})`,
		rig: sql`lower(${rigs.name})`,
		duration: sql`(${runs.lastT} - ${runs.firstT})`,
		frames: sql`${runs.frameCount}`,
		gospa: sql`${gm.gospaMean}`
	};
	const like = f.q ? `%${f.q.replace(/[\\%_]/g, (c) => '\\' + c)}%` : null;
	const rows = await db()
		.select({ ...runColumns, gospa_mean: gm.gospaMean, total })
		.from(runs)
		.innerJoin(rigs, eq(rigs.id, runs.rigId))
		.leftJoinLateral(gm, sql`true`)
		.where(
			and(
				f.rigId === undefined ? undefined : eq(runs.rigId, f.rigId),
				f.status === undefined ? undefined : eq(runs.status, f.status),
				f.tag === undefined ? undefined : sql`${f.tag}::text = any(${runs.tags})`,
				f.since === undefined ? undefined : sql`${recordedAt} >= ${f.since}::date`,
				f.until === undefined ? undefined : sql`${recordedAt} < ${f.until}::date + 1`,
				like === null
					? undefined
					: or(
							ilike(runs.name, like),
							ilike(rigs.name, like),
							ilike(runs.notes, like),
							sql`exists (select 1 from unnest(${runs.tags}) tg where tg ilike ${like})`
						)
			)
		)
		.orderBy(
			liveFirst,
			sql`${sortBy[f.sort ?? 'started']} ${sql.raw(f.dir === 'asc' ? 'asc' : 'desc')} nulls last`,
			runs.id
		)
		.limit(f.limit)
		.offset(f.offset);
	return {
		total: rows.length ? rows[0].total : 0,
		runs: rows.map(({ total: _t, gospa_mean, ...r }): RunListItem => ({
			...present(r),
			gospa_mean
		}))
	};
}

/** The tags and rigs the Runs table offers as filters. */
export async function runFacets(): Promise<RunFacets> {
	const [tags, rigRows] = await Promise.all([
		db()
			.selectDistinct({ tag: sql<string>`unnest(${runs.tags})`.as('tag') })
			.from(runs)
			.orderBy(sql`1`)
			.limit(500),
		db()
			.selectDistinct({ id: rigs.id, name: rigs.name })
			.from(rigs)
			.innerJoin(runs, eq(runs.rigId, rigs.id))
			.orderBy(rigs.name)
	]);
	return { tags: tags.map((t) => t.tag), rigs: rigRows };
}
