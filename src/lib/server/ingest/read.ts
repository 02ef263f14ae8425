/** Reading runs and their frames back, exactly as rigs sent them. */
import { Unpackr } from 'msgpackr';
import { sqlClient } from '$server/db';

const unpackr = new Unpackr({ useRecords: false, mapsAsObjects: true, int64AsType: 'number' });

export interface RunListFilter {
	rigId?: string;
	status?: string;
	limit: number;
	offset: number;
}

const runColumns = `r.id, r.rig_id, g.name as rig_name, r.client_run_id, r.name, r.state_fields, r.measurement_fields, r.coords,
	r.length_unit, r.tags, r.notes, r.status, r.started_at, r.ended_at, r.first_t, r.last_t, r.next_seq::float8 as next_seq,
	r.frame_count::float8 as frame_count, r.quarantine_count::float8 as quarantine_count, r.kept, r.metric_settings`;

type RunRow = Record<string, unknown> & { first_t: number | null; last_t: number | null; frame_count: number };

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
	const [row] = await sql<RunRow[]>`select ${sql.unsafe(runColumns)} from runs r join rigs g on g.id = r.rig_id where r.id = ${id}`;
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
		const { type: _type, ...frame } = unpackr.unpack(row.data) as Record<string, unknown>;
		return frame;
	});
	return { frames, next_from_seq: more ? rows[r.limit].seq : null };
}

export async function readQuarantine(runId: string, limit: number, offset: number) {
	const sql = sqlClient();
	const rows = await sql<{ id: number; seq: number | null; received_at: Date; reason: string; raw: Buffer }[]>`
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
