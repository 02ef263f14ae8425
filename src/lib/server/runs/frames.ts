/** Reading a run's frames back, exactly as rigs sent them, its quarantined messages and its metric series. */
import { unpack } from '$lib/msgpack';
import {
	seriesColumns,
	type FramePage,
	type QuarantinedMessage,
	type RunSeries,
	type SeriesBucketStats,
	type SeriesColumn
} from '$lib/api-types';
import type { FrameMessage } from '$lib/protocol/types';
import { sqlClient } from '$server/db';

export interface FrameRange {
	fromSeq?: number;
	toSeq?: number;
	from?: number;
	to?: number;
	limit: number;
}

/** Frames of a run in seq order, decoded to what the rig sent (without the message's `type`). */
export async function readFrames(runId: string, r: FrameRange): Promise<FramePage> {
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
		const { type: _type, ...frame } = unpack(row.data) as FrameMessage;
		return frame;
	});
	return { frames, next_from_seq: more ? rows[r.limit].seq : null };
}

export async function readQuarantine(
	runId: string,
	limit: number,
	offset: number
): Promise<QuarantinedMessage[]> {
	const sql = sqlClient();
	const rows = await sql<
		{ id: number; seq: number | null; received_at: Date; reason: string; raw: Buffer }[]
	>`
		select id::float8 as id, seq::float8 as seq, received_at, reason, raw from quarantine
		where run_id = ${runId} order by seq nulls last, id limit ${limit} offset ${offset}`;
	return rows.map((q) => ({
		id: q.id,
		seq: q.seq,
		received_at: q.received_at.toISOString(),
		reason: q.reason,
		bytes: q.raw.length,
		raw_base64: q.raw.toString('base64')
	}));
}

// ── Strips: the metric columns downsampled into time buckets ──

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
