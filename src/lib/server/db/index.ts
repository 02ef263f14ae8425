import { drizzle, type PostgresJsDatabase } from 'drizzle-orm/postgres-js';
import { Socket } from 'node:net';
import postgres from 'postgres';
import * as schema from './schema';
import { frames } from './frames';

export type Schema = typeof schema & { frames: typeof frames };
export type Database = PostgresJsDatabase<Schema>;

export function databaseUrl(): string {
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
 *
 * The socket is handed back before it connects, and connected only after postgres.js has put its own
 * `error` and `close` listeners on it. A factory that waits for the connection and rejects when it fails
 * (PostgreSQL down or restarting) leaves postgres.js's connection in its "connecting" queue for good: it
 * never sees a close, so it never returns to the pool. Each failed attempt then costs the pool one
 * connection until every query waits forever (issue 11, finding 2).
 */
function tcpNoDelay(options: { host: string[]; port: number[] }): Socket {
	const socket = new Socket();
	socket.setNoDelay(true);
	setImmediate(() => {
		if (!socket.destroyed) socket.connect(options.port[0], options.host[0]);
	});
	return socket;
}

/**
 * Seconds before a connection is tried again after a failed attempt. postgres.js's default grows as 3^n/100 s
 * up to 20 s over the failures of the whole pool, so rigs retrying while PostgreSQL is down push the pool's
 * next try far past PostgreSQL's return. Capped at 1 s here, with jitter.
 */
function reconnectDelay(failures: number): number {
	return Math.min(0.05 * 2 ** failures, 1) * (0.5 + Math.random() / 2);
}

function connect(): postgres.Sql {
	// `socket` is a documented postgres.js option its type declarations leave out
	const options = Object.assign(
		{
			max: Number(process.env.DATABASE_POOL ?? 10),
			onnotice: () => {},
			backoff: reconnectDelay,
			connect_timeout: 10
		},
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

/** Both pools of this module answer `select 1` (throws otherwise); for /healthz. */
export async function pingDatabase(): Promise<void> {
	db();
	const pools = [sqlClient(), drizzleClient].filter((c): c is postgres.Sql => c !== undefined);
	await Promise.all(pools.map((c) => c`select 1`));
}

export async function closeDb(): Promise<void> {
	const clients = [client, drizzleClient];
	client = undefined;
	drizzleClient = undefined;
	database = undefined;
	await Promise.all(clients.map((c) => c?.end({ timeout: 5 })));
}

export { schema, frames };
