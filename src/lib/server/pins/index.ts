/** Pins: moments of a run marked for triage, with the view they were seen in. */
import type { NewPin, PinView } from '$lib/validation/runs';
import { sqlClient } from '$server/db';
import { keepRun, lockRunSpan } from '$server/runs/kept';

export interface PinRow {
	id: string;
	run_id: string;
	run_name: string;
	t: number;
	seq: number | null;
	title: string;
	note: string;
	category: string;
	severity: string;
	view: PinView;
	status: string;
	created_by: string | null;
	created_by_name: string | null;
	/** a Date or an ISO string, depending on the client's type parsers */
	created_at: Date | string;
}

const pinColumns = `p.id, p.run_id, r.name as run_name, p.t, p.seq::float8 as seq, p.title, p.note, p.category, p.severity,
	p.view, p.status, p.created_by, u.name as created_by_name, p.created_at`;

export class PinError extends Error {
	constructor(
		public field: string,
		message: string
	) {
		super(message);
	}
}

/**
 * Stores a pin at `t` seconds from the run's first frame (the seq is the frame at or before it) and marks
 * the run kept, in one transaction, so retention never removes a pinned run.
 */
export async function createPin(runId: string, userId: string, pin: NewPin): Promise<PinRow> {
	const sql = sqlClient();
	return sql.begin(async (tx) => {
		const run = await lockRunSpan(tx, runId);
		if (!run) throw new PinError('_', 'No such run');
		if (run.first_t === null || run.last_t === null)
			throw new PinError('t', 'This run has no frames to pin yet');
		const duration = run.last_t - run.first_t;
		if (pin.t > duration + 1e-6)
			throw new PinError('t', `t must be within the run (0 to ${duration.toFixed(3)} s)`);
		const [frame] = await tx<{ seq: number }[]>`
			select seq::float8 as seq from frames where run_id = ${runId} and t <= ${run.first_t + pin.t + 1e-9}::float8
			order by t desc limit 1`;
		const [row] = await tx<{ id: string }[]>`
			insert into pins (run_id, t, seq, title, note, category, severity, view, created_by)
			values (${runId}, ${pin.t}, ${frame?.seq ?? null}, ${pin.title}, ${pin.note}, ${pin.category}, ${pin.severity},
				${JSON.stringify(pin.view)}::text::jsonb, ${userId})
			returning id`;
		await keepRun(tx, runId);
		const [out] = await tx<PinRow[]>`
			select ${tx.unsafe(pinColumns)} from pins p join runs r on r.id = p.run_id left join users u on u.id = p.created_by
			where p.id = ${row.id}`;
		return out;
	});
}

export async function listRunPins(runId: string): Promise<PinRow[]> {
	const sql = sqlClient();
	return sql<PinRow[]>`
		select ${sql.unsafe(pinColumns)} from pins p join runs r on r.id = p.run_id left join users u on u.id = p.created_by
		where p.run_id = ${runId} order by p.t, p.created_at`;
}

export async function listAllPins(
	limit: number,
	offset: number
): Promise<{ total: number; pins: PinRow[] }> {
	const sql = sqlClient();
	const rows = await sql<(PinRow & { total: number })[]>`
		select ${sql.unsafe(pinColumns)}, count(*) over ()::int as total
		from pins p join runs r on r.id = p.run_id left join users u on u.id = p.created_by
		order by p.created_at desc, p.id limit ${limit} offset ${offset}`;
	return { total: rows.length ? rows[0].total : 0, pins: rows.map(({ total: _t, ...p }) => p) };
}
