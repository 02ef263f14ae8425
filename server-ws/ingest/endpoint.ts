/**
 * The ingest WebSocket endpoint: authenticates the upgrade with the feed key, then hands each
 * connection to an {@link IngestSession}. Mount it on the web app's HTTP server:
 *
 *   const ingest = createIngestEndpoint({ store });
 *   server.on('upgrade', (req, socket, head) => { if (!ingest.handleUpgrade(req, socket, head)) … });
 */
import { STATUS_CODES, type IncomingMessage } from 'node:http';
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
import type { RunChannel } from './run-channel';
import { IngestSession, type SessionContext } from './session';
import type { IngestStore, RigRef } from './store';

export interface IngestEndpointOptions {
	store: IngestStore;
	/** where committed frames are published; defaults to the process-wide in-process instance */
	pubsub?: PubSub<RunEvent>;
	limits?: Partial<IngestLimits>;
	timing?: Partial<SessionTiming>;
	/** defaults to /ingest/v1 */
	path?: string;
	onError?: (error: unknown, context: string) => void;
}

/** A connection closed by the server that does not finish its closing handshake is cut after this. */
const CLOSE_DEADLINE_MS = 1000;

const ENDPOINTS = Symbol.for('skein.ingest.endpoints');

function liveEndpoints(): Set<IngestEndpoint> {
	const holder = globalThis as { [ENDPOINTS]?: Set<IngestEndpoint> };
	return (holder[ENDPOINTS] ??= new Set());
}

interface Connection {
	session: IngestSession;
	ws: WebSocket;
	alive: boolean;
	/** closes the connection when its key expires */
	expiry: ReturnType<typeof setTimeout> | null;
}

/** setTimeout's longest delay; a later expiry is waited for in steps */
const MAX_TIMER_MS = 2 ** 31 - 1;

export class IngestEndpoint {
	readonly path: string;
	readonly limits: IngestLimits;
	readonly timing: SessionTiming;
	#ctx: SessionContext;
	#store: IngestStore;
	#wss: WebSocketServer;
	#connections = new Set<Connection>();
	#pingTimer: ReturnType<typeof setInterval>;
	#closed = false;

	constructor(options: IngestEndpointOptions) {
		this.path = options.path ?? INGEST_PATH;
		this.limits = resolveLimits(options.limits);
		this.timing = resolveTiming(options.timing);
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
		this.#pingTimer = setInterval(() => this.#ping(), this.timing.pingIntervalMs);
		this.#pingTimer.unref();
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
	 * leaves the socket alone. A missing or refused feed key is answered with a 401 and no socket.
	 */
	handleUpgrade(req: IncomingMessage, socket: Duplex, head: Buffer): boolean {
		const url = req.url ?? '/';
		const q = url.indexOf('?');
		if ((q === -1 ? url : url.slice(0, q)) !== this.path) return false;
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
		this.#store.resolveKey(key).then(
			(resolution) => {
				if (socket.destroyed) return;
				if (!resolution.ok) {
					refuse(socket, 401, resolution.reason);
					return;
				}
				if (this.#closed) {
					refuse(socket, 503, 'server is shutting down');
					return;
				}
				this.#wss.handleUpgrade(req, socket, head, (ws) =>
					this.#accept(ws, resolution.rig, req.socket.remoteAddress ?? null)
				);
			},
			(error: unknown) => {
				this.#ctx.onError(error, 'resolving a feed key failed');
				refuse(socket, 503, 'feed keys cannot be checked right now; try again');
			}
		);
		return true;
	}

	#accept(ws: WebSocket, rig: RigRef, address: string | null): void {
		const conn: Connection = {
			ws,
			alive: true,
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
		ws.on('pong', () => {
			conn.alive = true;
		});
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

	#ping(): void {
		for (const conn of this.#connections) {
			if (!conn.alive) {
				conn.ws.terminate();
				continue;
			}
			conn.alive = false;
			conn.ws.ping();
		}
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
		clearInterval(this.#pingTimer);
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

const byStore = new WeakMap<IngestStore, IngestEndpoint>();

/**
 * Upgrade handler in function form: the endpoint for `store` is created on first use with these
 * options and reused afterwards. Returns false when the request is not for the ingest path.
 */
export function handleIngestUpgrade(
	req: IncomingMessage,
	socket: Duplex,
	head: Buffer,
	store: IngestStore,
	options: Omit<IngestEndpointOptions, 'store'> = {}
): boolean {
	let endpoint = byStore.get(store);
	if (endpoint === undefined) {
		endpoint = createIngestEndpoint({ ...options, store });
		byStore.set(store, endpoint);
	}
	return endpoint.handleUpgrade(req, socket, head);
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

export function refuse(socket: Duplex, status: number, reason: string): void {
	if (socket.destroyed) return;
	const body = `${reason.replace(/[\r\n]+/g, ' ').slice(0, 200)}\n`;
	const headers = [
		`HTTP/1.1 ${status} ${STATUS_CODES[status] ?? ''}`,
		'Content-Type: text/plain; charset=utf-8',
		`Content-Length: ${Buffer.byteLength(body)}`,
		'Connection: close'
	];
	if (status === 401) headers.push('WWW-Authenticate: Bearer');
	socket.once('finish', () => socket.destroy());
	socket.end(`${headers.join('\r\n')}\r\n\r\n${body}`);
}

export function closeWithin(ws: WebSocket, code: number, reason: string): void {
	if (ws.readyState === ws.CLOSED) return;
	ws.close(code, reason);
	setTimeout(() => {
		if (ws.readyState !== ws.CLOSED) ws.terminate();
	}, CLOSE_DEADLINE_MS).unref();
}

function toBytes(data: RawData): Uint8Array {
	if (Array.isArray(data)) return Buffer.concat(data);
	if (data instanceof ArrayBuffer) return new Uint8Array(data);
	return data;
}
