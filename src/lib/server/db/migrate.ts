import { drizzle } from 'drizzle-orm/postgres-js';
import { migrate } from 'drizzle-orm/postgres-js/migrator';
import { resolve } from 'node:path';
import postgres from 'postgres';

/** Applies the committed migrations in `drizzle/`, then makes sure today's and the next days' frame partitions exist. */
export async function applyMigrations(
	url: string,
	migrationsFolder = resolve('drizzle')
): Promise<void> {
	const sql = postgres(url, { max: 1, onnotice: () => {} });
	try {
		await migrate(drizzle(sql), { migrationsFolder });
		await sql`select skein_ensure_frames_partition(now() + make_interval(days => d)) from generate_series(0, 2) d`;
	} finally {
		await sql.end();
	}
}
