import type postgres from 'postgres';

const dayMs = 86_400_000;
const known = new Set<number>();

/** Forgets what this process knows about partitions (after retention dropped some). */
export function forgetPartitions(): void {
	known.clear();
}

/** Makes sure the day partitions for these frame times exist (created on demand, remembered per process). */
export async function ensurePartitionsFor(sql: postgres.Sql, times: number[]): Promise<void> {
	const days = new Set<number>();
	for (const t of times) {
		const day = Math.floor((t * 1000) / dayMs);
		if (!known.has(day)) days.add(day);
	}
	for (const day of days) {
		await sql`select skein_ensure_frames_partition(${new Date(day * dayMs)}::timestamptz)`;
		known.add(day);
	}
}

/** Creates the partitions for today and the next `ahead` days. */
export async function createPartitionsAhead(sql: postgres.Sql, ahead = 2): Promise<void> {
	await sql`select skein_ensure_frames_partition(now() + make_interval(days => d)) from generate_series(0, ${ahead}) d`;
}

/**
 * Retention: frames older than `days` are removed, except for kept runs. Whole day partitions go at
 * once when no kept run has frames in them; otherwise only the unkept runs' rows are deleted.
 */
export async function applyRetention(
	sql: postgres.Sql,
	days: number
): Promise<{ dropped: string[]; trimmed: string[] }> {
	const cutoff = new Date(Date.now() - days * dayMs);
	const parts = await sql<{ name: string; upper: Date }[]>`
		select c.relname as name,
		       (regexp_match(pg_get_expr(c.relpartbound, c.oid), 'TO \\(''([^'']+)''\\)'))[1]::timestamptz as upper
		from pg_inherits i join pg_class c on c.oid = i.inhrelid
		where i.inhparent = 'frames'::regclass`;
	const dropped: string[] = [];
	const trimmed: string[] = [];
	for (const p of parts) {
		if (p.upper > cutoff) continue;
		const [kept] = await sql<{ n: number }[]>`
			select count(*)::int as n from ${sql(p.name)} f join runs r on r.id = f.run_id where r.kept`;
		if (kept.n === 0) {
			await sql`drop table ${sql(p.name)}`;
			dropped.push(p.name);
		} else {
			await sql`delete from ${sql(p.name)} f using runs r where r.id = f.run_id and not r.kept`;
			trimmed.push(p.name);
		}
	}
	if (dropped.length) forgetPartitions();
	return { dropped, trimmed };
}
