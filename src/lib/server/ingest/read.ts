/** Reading runs and their frames back, exactly as rigs sent them. */
import { unpack } from '$lib/msgpack';
import { sqlClient } from '$server/db';

export interface RunListFilter {
	rigId?: string;
	status?: string;
	limit: number;
	offset: number;
}

const runColumns = `r.id, r.rig_id, g.name as rig_name, r.client_run_id, r.name, r.state_fields, r.measurement_fields, r.coords,
	r.length_unit, r.tags, r.notes, r.status, r.started_at, coalesce(to_timestamp(r.first_t), r.started_at) as recorded_at, r.ended_at, r.first_t, r.last_t, r.next_seq::float8 as next_seq,
	r.frame_count::float8 as frame_count, r.quarantine_count::float8 as quarantine_count, r.kept, r.metric_settings`;

type RunRow = Record<string, unknown> & {
	first_t: number | null;
	last_t: number | null;
	frame_count: number;
};

function present(row: RunRow) {
	const duration = row.first_t !== null && row.last_t !== null ? row.last_t - row.first_t : null;
	return {
		...row,
		duration_s: duration,
		frame_rate_hz: duration && duration > 0 ? (row.frame_count - 1) / duration : null
	};
}

export async function listRuns(f: RunListFilter) {
	const sql = sqlClient();
	const rows = await sql<RunRow[]>`
		select ${sql.unsafe(runColumns)}, count(*) over () ::int as total
		from runs r join rigs g on g.id = r.rig_id
		where (${f.rigId ?? null}::uuid is null or r.rig_id = ${f.rigId ?? null}::uuid)
		  and (${f.status ?? null}::text is null or r.status::text = ${f.status ?? null}::text)
		order by (r.status = 'live') desc, r.started_at desc
		limit ${f.limit} offset ${f.offset}`;
	const total = rows.length ? Number(rows[0].total) : 0;
	return { total, runs: rows.map(({ total: _t, ...r }) => present(r as RunRow)) };
}

export async function getRun(id: string) {
	const sql = sqlClient();
	const [row] = await sql<
		RunRow[]
	>`select ${sql.unsafe(runColumns)} from runs r join rigs g on g.id = r.rig_id where r.id = ${id}`;
	return row ? present(row) : null;
}

export interface FrameRange {
	fromSeq?: number;
	toSeq?: number;
	from?: number;
	to?: number;
	limit: number;
}

/** Frames of a run in seq order, decoded to what the rig sent (without the message's `type`). */
export async function readFrames(runId: string, r: FrameRange) {
	const sql = sqlClient();
	const rows = await sql<{ seq: number; data: Buffer }[]>`
		select seq::float8 as seq, data from frames
		where run_id = ${runId}
		  and (${r.fromSeq ?? null}::bigint is null or seq >= ${r.fromSeq ?? null}::bigint)
		  and (${r.toSeq ?? null}::bigint is null or seq <= ${r.toSeq ?? null}::bigint)
		  and (${r.from ?? null}::float8 is null or t >= ${r.from ?? null}::float8)
		  and (${r.to ?? null}::float8 is null or t <= ${r.to ?? null}::float8)
		order by seq
		limit ${r.limit + 1}`;
	const more = rows.length > r.limit;
	const page = more ? rows.slice(0, r.limit) : rows;
	const frames = page.map((row) => {
		const { type: _type, ...frame } = unpack(row.data) as Record<string, unknown>;
		return frame;
	});
	return { frames, next_from_seq: more ? rows[r.limit].seq : null };
}

export async function readQuarantine(runId: string, limit: number, offset: number) {
	const sql = sqlClient();
	const rows = await sql<
		{ id: number; seq: number | null; received_at: Date; reason: string; raw: Buffer }[]
	>`
		select id::float8 as id, seq::float8 as seq, received_at, reason, raw from quarantine
		where run_id = ${runId} order by seq nulls last, id limit ${limit} offset ${offset}`;
	return rows.map((q) => ({
		id: q.id,
		seq: q.seq,
		received_at: q.received_at,
		reason: q.reason,
		bytes: q.raw.length,
		raw_base64: q.raw.toString('base64')
	}));
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

const sortSql: Record<NonNullable<RunSearchFilter['sort']>, string> = {
	// the device time of the first frame: a run recorded last week and uploaded today started last week
	started: 'coalesce(to_timestamp(r.first_t), r.started_at)',
	name: 'lower(r.name)',
	rig: 'lower(g.name)',
	duration: '(r.last_t - r.first_t)',
	frames: 'r.frame_count',
	gospa: 'gm.gospa_mean'
};

/** Live runs always come first; then the chosen order. GOSPA mean comes from the stored per-frame values. */
export async function searchRuns(f: RunSearchFilter) {
	const sql = sqlClient();
	const order = `${sortSql[f.sort ?? 'started']} ${f.dir === 'asc' ? 'asc' : 'desc'} nulls last, r.id`;
	const like = f.q ? `%${f.q.replace(/[\\%_]/g, (c) => '\\' + c)}%` : null;
	const rows = await sql<RunRow[]>`
		select ${sql.unsafe(runColumns)}, gm.gospa_mean, count(*) over () ::int as total
			from runs r join rigs g on g.id = r.rig_id
			left join lateral (select avg(f.gospa) as gospa_mean from frames f where f.run_id = r.id) gm on true
			where (${f.rigId ?? null}::uuid is null or r.rig_id = ${f.rigId ?? null}::uuid)
			  and (${f.status ?? null}::text is null or r.status::text = ${f.status ?? null}::text)
			  and (${f.tag ?? null}::text is null or ${f.tag ?? null}::text = any(r.tags))
			  and (${f.since ?? null}::date is null or coalesce(to_timestamp(r.first_t), r.started_at) >= ${f.since ?? null}::date)
			  and (${f.until ?? null}::date is null or coalesce(to_timestamp(r.first_t), r.started_at) < ${f.until ?? null}::date + 1)
			  and (${like}::text is null or r.name ilike ${like} or g.name ilike ${like} or r.notes ilike ${like}
			       or exists (select 1 from unnest(r.tags) tg where tg ilike ${like}))
		order by (r.status = 'live') desc, ${sql.unsafe(order)}
		limit ${f.limit} offset ${f.offset}`;
	const total = rows.length ? Number(rows[0].total) : 0;
	return { total, runs: rows.map(({ total: _t, ...r }) => present(r as RunRow)) };
}

/** The tags and rigs the Runs table offers as filters. */
export async function runFacets() {
	const sql = sqlClient();
	const [tags, rigs] = await Promise.all([
		sql<{ tag: string }[]>`select distinct unnest(tags) as tag from runs order by 1 limit 500`,
		sql<
			{ id: string; name: string }[]
		>`select distinct g.id, g.name from rigs g join runs r on r.rig_id = g.id order by g.name`
	]);
	return { tags: tags.map((t) => t.tag), rigs };
}

// ── Strips: the metric columns downsampled into time buckets ──

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

/**
 * min/max/mean of each metric column per time bucket, grouped in SQL (floor of (t − from)/width), so a
 * one-hour run arrives as a few hundred points; `from`/`to` are seconds from run start, for zooming in.
 */
export async function readSeries(
	runId: string,
	firstT: number,
	from: number,
	to: number,
	buckets: number
): Promise<RunSeries> {
	const sql = sqlClient();
	const width = (to - from) / buckets;
	const a = firstT + from;
	const b = firstT + to;
	const aggs = seriesColumns
		.map(
			(c) =>
				`min(${c})::float8 as ${c}_min, max(${c})::float8 as ${c}_max, avg(${c})::float8 as ${c}_mean`
		)
		.join(', ');
	const [rows, zoneRows] = await Promise.all([
		sql<Record<string, number | null>[]>`
			select least(floor((t - ${a}::float8) / ${width}::float8)::int, ${buckets - 1}::int) as b, count(*)::int as n, ${sql.unsafe(aggs)}
			from frames where run_id = ${runId} and t >= ${a}::float8 and t <= ${b}::float8
			group by 1 order by 1`,
		sql<{ b: number; k: string; lo: number; hi: number; m: number }[]>`
			select least(floor((t - ${a}::float8) / ${width}::float8)::int, ${buckets - 1}::int) as b, z.key as k,
				min(z.value::float8) as lo, max(z.value::float8) as hi, avg(z.value::float8) as m
			from frames, jsonb_each_text(zones) z
			where run_id = ${runId} and t >= ${a}::float8 and t <= ${b}::float8 and zones is not null
			group by 1, 2 order by 1`
	]);
	const index = new Map<number, number>();
	const out: RunSeries = {
		from,
		to,
		width,
		t: [],
		frames: [],
		columns: Object.fromEntries(
			seriesColumns.map((c) => [c, { min: [], max: [], mean: [] }])
		) as unknown as Record<SeriesColumn, SeriesBucketStats>,
		zones: {}
	};
	rows.forEach((row, i) => {
		const bucket = Number(row.b);
		index.set(bucket, i);
		out.t.push(from + bucket * width);
		out.frames.push(Number(row.n));
		for (const c of seriesColumns) {
			out.columns[c].min.push(row[`${c}_min`]);
			out.columns[c].max.push(row[`${c}_max`]);
			out.columns[c].mean.push(row[`${c}_mean`]);
		}
	});
	for (const z of zoneRows) {
		const s = (out.zones[z.k] ??= {
			min: rows.map(() => null),
			max: rows.map(() => null),
			mean: rows.map(() => null)
		});
		const i = index.get(Number(z.b));
		if (i === undefined) continue;
		s.min[i] = z.lo;
		s.max[i] = z.hi;
		s.mean[i] = z.m;
	}
	return out;
}
