/**
 * The viewer socket (docs/live.md): `/live/{runId}` sends one run's committed frames as they are committed,
 * `/live` sends the Live board's summaries. Authenticated by the session cookie of the upgrade request and
 * refused before any socket opens (401, 403, 404, one plain-text line). Frames come from the run's PubSub
 * subscription — one per run however many watch it — and reach each viewer through a latest-wins outbox.
 */
import type { IncomingMessage } from 'node:http';
import type { Duplex } from 'node:stream';
import { parse as parseCookies } from 'cookie';
import { WebSocketServer, type RawData, type WebSocket } from 'ws';
import { unpack } from '../../src/lib/msgpack';
import { can, type Role } from '../../src/lib/permissions';
import type { LiveStats } from '../../src/lib/api-types';
import {
	LIVE_PATH,
	LIVE_PROTOCOL,
	LiveCloseCode,
	type LiveRunInfo
} from '../../src/lib/protocol/live';
import { registerLiveStats } from '../../src/lib/server/live/stats';
import { sharedPubSub, type PubSub, type RunEvent } from '../pubsub';
import { closeWithin, Heartbeat, refuse, requestPath, safeDecode } from '../upgrade';
import { BoardHub } from './board';
import { encode, frameBody } from './encode';
import { LiveViewer } from './viewer';

export interface LiveIdentity {
	sessionId: string;
	userId: string;
	role: Role;
}

/** What the endpoint needs to know about people and runs; PostgreSQL-backed in server-ws/live/directory.ts. */
export interface LiveDirectory {
	/** null for an unknown, expired or signed-out session, or a deactivated person */
	authenticate(sessionId: string): Promise<LiveIdentity | null>;
	findRun(runId: string): Promise<LiveRunInfo | null>;
	liveRuns(): Promise<LiveRunInfo[]>;
}

export interface LiveEndpointOptions {
	directory: LiveDirectory;
	pubsub?: PubSub<RunEvent>;
	sessionCookie?: string;
	/** how often open sockets' sessions are checked again; default 60 s */
	recheckMs?: number;
	pingMs?: number;
	boardHz?: number;
	onError?: (error: unknown, context: string) => void;
}

interface Connection {
	viewer: LiveViewer;
	ws: WebSocket;
}

const uuid = /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i;

/** Viewers of one run, behind one subscription. */
class RunHub {
	viewers = new Set<LiveViewer>();
	#unsubscribe: () => void;

	constructor(pubsub: PubSub<RunEvent>, runId: string, onEnded: (viewer: LiveViewer) => void) {
		this.#unsubscribe = pubsub.subscribe(runId, (event) => {
			if (event.kind === 'frame') {
				const body = frameBody(event.seq, event.t, Date.now(), event.frame, event.metrics);
				for (const v of this.viewers) v.offerFrame(body);
			} else if (event.kind === 'quarantined') {
				for (const v of this.viewers) v.noteQuarantined();
			} else {
				const bytes = encode({ type: 'state', state: event.state, at: Date.now() });
				for (const v of this.viewers)
					v.offerState(bytes, event.state === 'ended' ? () => onEnded(v) : undefined);
			}
		});
	}

	close() {
		this.#unsubscribe();
	}
}

export class LiveEndpoint {
	#o: LiveEndpointOptions & {
		sessionCookie: string;
		onError: (error: unknown, context: string) => void;
	};
	#pubsub: PubSub<RunEvent>;
	#wss = new WebSocketServer({
		noServer: true,
		maxPayload: 4096,
		perMessageDeflate: false,
		clientTracking: false
	});
	#hubs = new Map<string, RunHub>();
	#board: BoardHub;
	#connections = new Set<Connection>();
	#recheckTimer: ReturnType<typeof setInterval>;
	#heartbeat: Heartbeat;
	#unregister: () => void;
	#closed = false;

	constructor(options: LiveEndpointOptions) {
		this.#o = {
			...options,
			sessionCookie: options.sessionCookie ?? 'skein_session',
			onError: options.onError ?? ((error, context) => console.error(`[live] ${context}:`, error))
		};
		this.#pubsub = options.pubsub ?? sharedPubSub();
		this.#board = new BoardHub({
			pubsub: this.#pubsub,
			liveRuns: () => options.directory.liveRuns(),
			hz: options.boardHz,
			onError: this.#o.onError
		});
		this.#heartbeat = new Heartbeat(options.pingMs ?? 15_000);
		this.#recheckTimer = setInterval(() => void this.#recheck(), options.recheckMs ?? 60_000);
		this.#recheckTimer.unref();
		this.#unregister = registerLiveStats(() => this.stats());
	}

	stats(): LiveStats {
		return { viewers: [...this.#connections].map((c) => c.viewer.stats()) };
	}

	/**
	 * Takes upgrades for /live and /live/{runId} (returns true); leaves every other path alone. A run id
	 * that is not one (broken percent-encoding included) is a 404 once the viewer is authenticated.
	 */
	handleUpgrade(req: IncomingMessage, socket: Duplex, head: Buffer): boolean {
		const path = requestPath(req.url);
		let runId: string | null;
		if (path === LIVE_PATH || path === `${LIVE_PATH}/`) runId = null;
		else if (path.startsWith(`${LIVE_PATH}/`) && !path.slice(LIVE_PATH.length + 1).includes('/'))
			runId = safeDecode(path.slice(LIVE_PATH.length + 1)) ?? '';
		else return false;
		socket.on('error', () => socket.destroy());
		if (this.#closed) {
			refuse(socket, 503, 'server is shutting down');
			return true;
		}
		const origin = req.headers.origin;
		if (origin !== undefined && !sameHost(origin, req.headers.host)) {
			refuse(socket, 403, 'cross-origin viewer sockets are not allowed');
			return true;
		}
		const sessionId = req.headers.cookie
			? parseCookies(req.headers.cookie)[this.#o.sessionCookie]
			: undefined;
		if (!sessionId) {
			refuse(socket, 401, 'sign in first: the request carries no session cookie');
			return true;
		}
		void this.#admit(req, socket, head, sessionId, runId).catch((error: unknown) => {
			this.#o.onError(error, 'admitting a viewer failed');
			refuse(socket, 503, 'runs cannot be read right now; try again');
		});
		return true;
	}

	async #admit(
		req: IncomingMessage,
		socket: Duplex,
		head: Buffer,
		sessionId: string,
		runId: string | null
	) {
		const who = plausibleSessionId(sessionId)
			? await this.#o.directory.authenticate(sessionId)
			: null;
		if (who === null) return refuse(socket, 401, 'session expired or signed out: sign in again');
		if (!can(who.role, 'runs:read'))
			return refuse(socket, 403, `your role (${who.role}) may not read runs`);
		if (runId !== null && !uuid.test(runId)) return refuse(socket, 404, 'no such run');
		if (socket.destroyed) return;

		const viewer = new LiveViewer({ runId, sessionId, countsInFrames: runId !== null });
		if (runId === null) {
			this.#upgrade(
				req,
				socket,
				head,
				viewer,
				(ws) => void this.#board.add(viewer, ws),
				() => this.#board.remove(viewer)
			);
			return;
		}
		// subscribe before reading the run, so nothing committed in between is missed
		this.#join(runId, viewer);
		let run: LiveRunInfo | null;
		try {
			run = await this.#o.directory.findRun(runId);
		} catch (error) {
			this.#leave(runId, viewer);
			throw error;
		}
		if (run === null || socket.destroyed || this.#closed) {
			this.#leave(runId, viewer);
			if (run === null) refuse(socket, 404, 'no such run');
			else if (this.#closed) refuse(socket, 503, 'server is shutting down');
			return;
		}
		const hello = encode({ type: 'hello', protocol: LIVE_PROTOCOL, run, now: Date.now() });
		this.#upgrade(
			req,
			socket,
			head,
			viewer,
			(ws) => viewer.attach(ws, hello),
			() => this.#leave(runId, viewer)
		);
	}

	#upgrade(
		req: IncomingMessage,
		socket: Duplex,
		head: Buffer,
		viewer: LiveViewer,
		start: (ws: WebSocket) => void,
		stop: () => void
	) {
		this.#wss.handleUpgrade(req, socket, head, (ws) => {
			const conn: Connection = { viewer, ws };
			this.#connections.add(conn);
			this.#heartbeat.watch(ws);
			ws.on('error', () => {});
			ws.on('message', (data: RawData, isBinary: boolean) => this.#receive(conn, data, isBinary));
			ws.on('close', () => {
				this.#connections.delete(conn);
				viewer.detach();
				stop();
			});
			try {
				start(ws);
			} catch (error) {
				this.#o.onError(error, 'starting a viewer failed');
				ws.terminate();
			}
		});
	}

	#receive(conn: Connection, data: RawData, isBinary: boolean) {
		let msg: unknown;
		try {
			const bytes = Array.isArray(data) ? Buffer.concat(data) : Buffer.from(data as ArrayBuffer);
			msg = isBinary ? unpack(bytes) : JSON.parse(bytes.toString('utf8'));
		} catch {
			return;
		}
		if (
			typeof msg === 'object' &&
			msg !== null &&
			'type' in msg &&
			msg.type === 'ping' &&
			'c' in msg &&
			typeof msg.c === 'number'
		) {
			conn.viewer.offerPong(encode({ type: 'pong', c: msg.c, s: Date.now() }));
		}
	}

	#join(runId: string, viewer: LiveViewer) {
		let hub = this.#hubs.get(runId);
		if (!hub) {
			hub = new RunHub(this.#pubsub, runId, (v) =>
				this.#closeViewer(v, LiveCloseCode.runEnded, 'run ended')
			);
			this.#hubs.set(runId, hub);
		}
		hub.viewers.add(viewer);
	}

	#leave(runId: string, viewer: LiveViewer) {
		const hub = this.#hubs.get(runId);
		if (!hub) return;
		hub.viewers.delete(viewer);
		if (hub.viewers.size === 0) {
			hub.close();
			this.#hubs.delete(runId);
		}
	}

	#closeViewer(viewer: LiveViewer, code: number, reason: string) {
		for (const c of this.#connections) if (c.viewer === viewer) closeWithin(c.ws, code, reason);
	}

	/** A session signed out, expired or whose person was deactivated loses its sockets here (or on reconnect). */
	async #recheck() {
		const bySession = new Map<string, Connection[]>();
		for (const c of this.#connections) {
			const list = bySession.get(c.viewer.sessionId) ?? [];
			list.push(c);
			bySession.set(c.viewer.sessionId, list);
		}
		for (const [sessionId, conns] of bySession) {
			let who: LiveIdentity | null;
			try {
				who = await this.#o.directory.authenticate(sessionId);
			} catch (error) {
				this.#o.onError(error, 'checking a viewer session failed');
				continue;
			}
			for (const c of conns) {
				if (who === null)
					closeWithin(c.ws, LiveCloseCode.sessionInvalid, 'session no longer valid');
				else if (!can(who.role, 'runs:read'))
					closeWithin(c.ws, LiveCloseCode.forbidden, 'role may not read runs');
			}
		}
	}

	async close() {
		if (this.#closed) return;
		this.#closed = true;
		clearInterval(this.#recheckTimer);
		this.#heartbeat.stop();
		this.#unregister();
		for (const c of this.#connections)
			closeWithin(c.ws, LiveCloseCode.goingAway, 'server shutting down');
		this.#board.close();
		for (const hub of this.#hubs.values()) hub.close();
		this.#hubs.clear();
		this.#wss.close();
	}
}

export function createLiveEndpoint(options: LiveEndpointOptions): LiveEndpoint {
	return new LiveEndpoint(options);
}

/**
 * Session ids are short printable ASCII; anything else (control characters from a decoded `%00`, a megabyte
 * of cookie) cannot be a session and is not looked up.
 */
function plausibleSessionId(id: string): boolean {
	return /^[\x21-\x7e]{1,255}$/.test(id);
}

function sameHost(origin: string, host: string | undefined): boolean {
	try {
		return host !== undefined && new URL(origin).host === host;
	} catch {
		return false;
	}
}
