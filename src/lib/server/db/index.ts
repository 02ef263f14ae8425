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
let drizzleClient: postgres.Sql | undefined;
let database: Database | undefined;

function connect(): postgres.Sql {
	return postgres(databaseUrl(), { max: Number(process.env.DATABASE_POOL ?? 10), onnotice: () => {} });
}

/**
 * The raw postgres.js client, for COPY, streaming and hand-written SQL. It is not the client Drizzle uses:
 * Drizzle replaces its client's type serializers and parsers (dates and json pass through as text), which
 * would break Date and sql.json() parameters here.
 */
export function sqlClient(): postgres.Sql {
	client ??= connect();
	return client;
}

/** The typed Drizzle client. */
export function db(): Database {
	drizzleClient ??= connect();
	database ??= drizzle(drizzleClient, { schema: { ...schema, frames } });
	return database;
}

export async function closeDb(): Promise<void> {
	const clients = [client, drizzleClient];
	client = undefined;
	drizzleClient = undefined;
	database = undefined;
	await Promise.all(clients.map((c) => c?.end({ timeout: 5 })));
}

export { schema, frames };
