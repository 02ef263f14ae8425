import { drizzle, type PostgresJsDatabase } from 'drizzle-orm/postgres-js';
import { createConnection, type Socket } from 'node:net';
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

/**
 * postgres.js leaves Nagle's algorithm on. A COPY ends with a small CopyDone written right after the data,
 * which then waits for the server's delayed ACK: about 40 ms, twice per COPY (measured). Sockets here send at once.
 */
function tcpNoDelay(options: { host: string[]; port: number[] }): Promise<Socket> {
	return new Promise((resolve, reject) => {
		const socket = createConnection({
			host: options.host[0],
			port: options.port[0],
			noDelay: true
		});
		socket.once('connect', () => {
			socket.off('error', reject);
			resolve(socket);
		});
		socket.once('error', reject);
	});
}

function connect(): postgres.Sql {
	// `socket` is a documented postgres.js option its type declarations leave out
	const options = Object.assign(
		{ max: Number(process.env.DATABASE_POOL ?? 10), onnotice: () => {} },
		{ socket: tcpNoDelay }
	);
	return postgres(databaseUrl(), options);
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
