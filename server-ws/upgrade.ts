/**
 * What every socket endpoint shares: one upgrade dispatch that no request can take down, the plain-text
 * refusal before any socket opens, the path of an upgrade request, a close that cannot hang, and one heartbeat.
 */
import { STATUS_CODES, type IncomingMessage, type Server } from 'node:http';
import type { Duplex } from 'node:stream';
import type { WebSocket } from 'ws';

/** Takes the upgrade (returns true) or leaves the socket untouched (returns false). */
export type UpgradeHandler = (req: IncomingMessage, socket: Duplex, head: Buffer) => boolean;

/** A connection closed by the server that does not finish its closing handshake is cut after this. */
const CLOSE_DEADLINE_MS = 1000;

/**
 * Hands each upgrade request to the first handler that takes it. A handler that throws ends that socket
 * with a 500, never the process; a path no handler takes is answered 404, unless another upgrade listener
 * is on the server (in development, Vite's own socket).
 */
export function dispatchUpgrades(
	server: Server,
	handlers: UpgradeHandler[],
	onError: (error: unknown, context: string) => void
): void {
	server.on('upgrade', (req: IncomingMessage, socket: Duplex, head: Buffer) => {
		// a client resetting the connection must not become an uncaught 'error'
		socket.on('error', () => socket.destroy());
		try {
			for (const handle of handlers) if (handle(req, socket, head)) return;
		} catch (error) {
			onError(error, `upgrade handler threw for ${JSON.stringify((req.url ?? '').slice(0, 200))}`);
			refuse(socket, 500, 'the upgrade could not be handled');
			return;
		}
		if (server.listenerCount('upgrade') === 1)
			refuse(socket, 404, 'no socket endpoint at this path');
	});
}

/** The path of an upgrade request, without its query string. */
export function requestPath(url: string | undefined): string {
	const target = url ?? '/';
	const q = target.indexOf('?');
	return q === -1 ? target : target.slice(0, q);
}

/** decodeURIComponent that answers null for broken percent-encoding instead of throwing. */
export function safeDecode(part: string): string | null {
	try {
		return decodeURIComponent(part);
	} catch {
		return null;
	}
}

/** Refuses an upgrade before any socket opens: the status and one plain-text line, then the connection ends. */
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

/** Starts the closing handshake; a peer that does not answer it within a second is cut. */
export function closeWithin(ws: WebSocket, code: number, reason: string): void {
	if (ws.readyState === ws.CLOSED) return;
	ws.close(code, reason);
	setTimeout(() => {
		if (ws.readyState !== ws.CLOSED) ws.terminate();
	}, CLOSE_DEADLINE_MS).unref();
}

/**
 * Pings every watched socket once per interval; a socket that has not answered the previous ping when the
 * next is due is cut (its 'close' follows, as for any drop).
 */
export class Heartbeat {
	#answered = new Map<WebSocket, boolean>();
	#timer: ReturnType<typeof setInterval>;

	constructor(intervalMs: number) {
		this.#timer = setInterval(() => this.#beat(), intervalMs);
		this.#timer.unref();
	}

	watch(ws: WebSocket): void {
		this.#answered.set(ws, true);
		ws.on('pong', () => {
			if (this.#answered.has(ws)) this.#answered.set(ws, true);
		});
		ws.once('close', () => this.#answered.delete(ws));
	}

	#beat(): void {
		for (const [ws, answered] of this.#answered) {
			if (!answered) {
				ws.terminate();
				continue;
			}
			this.#answered.set(ws, false);
			if (ws.readyState === ws.OPEN) ws.ping();
		}
	}

	stop(): void {
		clearInterval(this.#timer);
	}
}
