/**
 * The ingest WebSocket endpoint: authenticates the upgrade with the feed key, then hands each
 * connection to an {@link IngestSession}. Mount it on the web app's HTTP server:
 *
 *   const ingest = createIngestEndpoint({ store });
 *   server.on('upgrade', (req, socket, head) => { if (!ingest.handleUpgrade(req, socket, head)) … });
 */
import type { IncomingMessage } from 'node:http';
import type { Duplex } from 'node:stream';
import { WebSocketServer, type RawData, type WebSocket } from 'ws';
import {
	resolveLimits,
	resolveTiming,
	type IngestLimits,
	type SessionTiming
} from '../../src/lib/protocol/limits';
import { CloseCode, INGEST_PATH } from '../../src/lib/protocol/types';
import { sharedPubSub, type PubSub, type RunEvent } from '../pubsub';
import { closeWithin, Heartbeat, refuse, requestPath } from '../upgrade';
import type { RunChannel } from './run-channel';
import { IngestSession, type SessionContext } from './session';
import type { IngestStore, KeyResolution, RigRef } from '../../src/lib/server/ingest/contract';

export interface IngestEndpointOptions {
	store: IngestStore;
	/** where committed frames are published; defaults to the process-wide in-process instance */
	pubsub?: PubSub<RunEvent>;
	limits?: Partial<IngestLimits>;
	timing?: Partial<SessionTiming>;
	/** defaults to /ingest/v1 */
	path?: string;
	/** open connections one feed key may hold at once; further upgrades are refused with 429. Default 4. */
	maxConnectionsPerKey?: number;
	onError?: (error: unknown, context: string) => void;
}

export const DEFAULT_MAX_CONNECTIONS_PER_KEY = 4;

const ENDPOINTS = Symbol.for('skein.ingest.endpoints');

function liveEndpoints(): Set<IngestEndpoint> {
	const holder = globalThis as { [ENDPOINTS]?: Set<IngestEndpoint> };
	return (holder[ENDPOINTS] ??= new Set());
}

interface Connection {
	session: IngestSession;
	ws: WebSocket;
	/** closes the connection when its key expires */
	expiry: ReturnType<typeof setTimeout> | null;
}

/** setTimeout's longest delay; a later expiry is waited for in steps */
const MAX_TIMER_MS = 2 ** 31 - 1;

export class IngestEndpoint {
	readonly path: string;
	readonly limits: IngestLimits;
	readonly timing: SessionTiming;
	readonly maxConnectionsPerKey: number;
	#ctx: SessionContext;
	#store: IngestStore;
	#wss: WebSocketServer;
	#connections = new Set<Connection>();
	#heartbeat: Heartbeat;
	#closed = false;

	constructor(options: IngestEndpointOptions) {
		this.path = options.path ?? INGEST_PATH;
		this.limits = resolveLimits(options.limits);
		this.timing = resolveTiming(options.timing);
		this.maxConnectionsPerKey = options.maxConnectionsPerKey ?? DEFAULT_MAX_CONNECTIONS_PER_KEY;
		this.#store = options.store;
		this.#ctx = {
			store: options.store,
			pubsub: options.pubsub ?? sharedPubSub(),
			limits: this.limits,
			timing: this.timing,
			onError:
				options.onError ?? ((error, context) => console.error(`[ingest] ${context}:`, error)),
			runs: new Map<string, RunChannel>()
		};
		// Messages up to twice the limit are read so the rig gets a too_large error before the 1009;
		// anything longer is cut off by ws itself (also 1009) without reading it.
		this.#wss = new WebSocketServer({
			noServer: true,
			maxPayload: this.limits.maxMessageBytes * 2,
			perMessageDeflate: false,
			clientTracking: false
		});
		this.#heartbeat = new Heartbeat(this.timing.pingIntervalMs);
		liveEndpoints().add(this);
	}

	/** Number of open ingest connections. */
	get connections(): number {
		return this.#connections.size;
	}

	/** Runs this process is ingesting (live, or waiting in their grace period). */
	get runs(): ReadonlyMap<string, RunChannel> {
		return this.#ctx.runs;
	}

	/**
	 * Takes the upgrade if its path is the ingest path (returns true), else returns false and
	 * leaves the socket alone. A missing or refused feed key is answered with a 401 and no socket,
	 * a key already holding its most connections with a 429.
	 */
	handleUpgrade(req: IncomingMessage, socket: Duplex, head: Buffer): boolean {
		if (requestPath(req.url) !== this.path) return false;
		socket.on('error', () => socket.destroy());
		if (this.#closed) {
			refuse(socket, 503, 'server is shutting down');
			return true;
		}
		const key = bearerKey(req.headers.authorization);
		if (key === null) {
			refuse(socket, 401, 'missing feed key: send "Authorization: Bearer <feed key>"');
			return true;
		}
		this.#admit(req, socket, head, key).catch((error: unknown) => {
			this.#ctx.onError(error, 'admitting a rig failed');
			refuse(socket, 500, 'the upgrade could not be handled');
		});
		return true;
	}

	async #admit(req: IncomingMessage, socket: Duplex, head: Buffer, key: string): Promise<void> {
		let resolution: KeyResolution;
		try {
			resolution = await this.#store.resolveKey(key);
		} catch (error) {
			this.#ctx.onError(error, 'resolving a feed key failed');
			return refuse(socket, 503, 'feed keys cannot be checked right now; try again');
		}
		if (socket.destroyed) return;
		if (!resolution.ok) return refuse(socket, 401, resolution.reason);
		if (this.#closed) return refuse(socket, 503, 'server is shutting down');
		const { rig } = resolution;
		if (this.#connectionsOf(rig.keyId) >= this.maxConnectionsPerKey)
			return refuse(
				socket,
				429,
				`too many connections with this feed key: at most ${this.maxConnectionsPerKey} at a time; close one first`
			);
		// ws completes the handshake synchronously, so the count above cannot be overtaken
		this.#wss.handleUpgrade(req, socket, head, (ws) => {
			try {
				this.#accept(ws, rig, req.socket.remoteAddress ?? null);
			} catch (error) {
				this.#ctx.onError(error, 'accepting a rig failed');
				ws.terminate();
			}
		});
	}

	#connectionsOf(keyId: string): number {
		let n = 0;
		for (const conn of this.#connections) if (conn.session.rig.keyId === keyId) n++;
		return n;
	}

	#accept(ws: WebSocket, rig: RigRef, address: string | null): void {
		const conn: Connection = {
			ws,
			expiry: null,
			session: new IngestSession(this.#ctx, rig, {
				send: (data) => {
					if (ws.readyState === ws.OPEN) ws.send(data);
				},
				close: (code, reason) => closeWithin(ws, code, reason)
			})
		};
		this.#connections.add(conn);
		ws.on('message', (data: RawData, isBinary: boolean) =>
			conn.session.receive(toBytes(data), isBinary)
		);
		this.#heartbeat.watch(ws);
		ws.on('error', () => {});
		ws.on('close', () => {
			this.#connections.delete(conn);
			if (conn.expiry !== null) clearTimeout(conn.expiry);
			conn.session.disconnected();
		});
		this.#armExpiry(conn, rig.expiresAt ?? null);
		this.#store
			.touchKey(rig.keyId, address)
			.catch((error: unknown) => this.#ctx.onError(error, 'touchKey failed'));
	}

	/** A connection whose key expires at `expiresAt` (ms) is closed then: 4001 "key expired". */
	#armExpiry(conn: Connection, expiresAt: number | null): void {
		if (conn.expiry !== null) clearTimeout(conn.expiry);
		conn.expiry = null;
		if (expiresAt === null) return;
		const wait = expiresAt - Date.now();
		if (wait <= 0) {
			conn.session.end(CloseCode.keyRevoked, 'key expired');
			return;
		}
		conn.expiry = setTimeout(() => this.#armExpiry(conn, expiresAt), Math.min(wait, MAX_TIMER_MS));
		conn.expiry.unref();
	}

	/** The key's expiry changed (a rotation's grace period): its connections close when it comes. */
	setKeyExpiry(keyId: string, expiresAt: number): number {
		let n = 0;
		for (const conn of this.#connections) {
			if (conn.session.rig.keyId !== keyId) continue;
			this.#armExpiry(conn, expiresAt);
			n++;
		}
		return n;
	}

	/** The feed keys of the open connections. */
	keyIdsInUse(): Set<string> {
		return new Set([...this.#connections].map((conn) => conn.session.rig.keyId));
	}

	/** Closes every connection streaming with this key: 4001 "key revoked". Returns how many. */
	closeSocketsForKey(keyId: string): number {
		let closed = 0;
		for (const conn of this.#connections) {
			if (conn.session.rig.keyId !== keyId) continue;
			conn.session.end(CloseCode.keyRevoked, 'key revoked');
			closed++;
		}
		return closed;
	}

	/**
	 * Stops taking connections, closes the open ones (1001), lets pending commits finish and marks
	 * the runs that were live interrupted, so nothing stays "live" after the process is gone.
	 */
	async close(): Promise<void> {
		if (this.#closed) return;
		this.#closed = true;
		this.#heartbeat.stop();
		liveEndpoints().delete(this);
		for (const conn of this.#connections)
			conn.session.end(CloseCode.goingAway, 'server shutting down');
		await Promise.all([...this.#ctx.runs.values()].map((ch) => ch.expire()));
		this.#ctx.runs.clear();
		this.#wss.close();
	}
}

export function createIngestEndpoint(options: IngestEndpointOptions): IngestEndpoint {
	return new IngestEndpoint(options);
}

/**
 * Key revocation hook for the rest of the app: closes, in every ingest endpoint of this process,
 * the connections using the key (4001 "key revoked", finished within 1 s). Returns how many.
 */
export function closeSocketsForKey(keyId: string): number {
	let closed = 0;
	for (const endpoint of liveEndpoints()) closed += endpoint.closeSocketsForKey(keyId);
	return closed;
}

/** The feed keys open connections of this process stream with. */
export function keyIdsInUse(): string[] {
	const ids = new Set<string>();
	for (const endpoint of liveEndpoints()) for (const id of endpoint.keyIdsInUse()) ids.add(id);
	return [...ids];
}

/** A key's new expiry (ms since the epoch), for every ingest endpoint of this process. Returns the connections it applies to. */
export function setKeyExpiry(keyId: string, expiresAt: number): number {
	let n = 0;
	for (const endpoint of liveEndpoints()) n += endpoint.setKeyExpiry(keyId, expiresAt);
	return n;
}

function bearerKey(header: string | undefined): string | null {
	if (header === undefined) return null;
	const match = /^Bearer[ \t]+(\S+)[ \t]*$/i.exec(header);
	return match === null ? null : match[1];
}

function toBytes(data: RawData): Uint8Array {
	if (Array.isArray(data)) return Buffer.concat(data);
	if (data instanceof ArrayBuffer) return new Uint8Array(data);
	return data;
}
