import { drizzle, type PostgresJsDatabase } from 'drizzle-orm/postgres-js';
import postgres from 'postgres';
import * as schema from './schema';
import { frames } from './frames';

export type Schema = typeof schema & { frames: typeof frames };
export type Database = PostgresJsDatabase<Schema>;

function databaseUrl(): string {
	const url = process.env.DATABASE_URL;
	if (!url) throw new Error('DATABASE_URL is not set (npm start and npm test set it for you)');
	return url;
}

let client: postgres.Sql | undefined;
let database: Database | undefined;

/** The raw postgres.js client, for COPY, streaming and hand-written SQL. */
export function sqlClient(): postgres.Sql {
	client ??= postgres(databaseUrl(), {
		max: Number(process.env.DATABASE_POOL ?? 10),
		onnotice: () => {}
	});
	return client;
}

/** The typed Drizzle client. */
export function db(): Database {
	database ??= drizzle(sqlClient(), { schema: { ...schema, frames } });
	return database;
}

export async function closeDb(): Promise<void> {
	const c = client;
	client = undefined;
	database = undefined;
	await c?.end({ timeout: 5 });
}

export { schema, frames };
