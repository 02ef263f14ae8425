/**
 * TEST FIXTURE: a real HTTP server on 127.0.0.1 with the ingest upgrade handler, and a raw
 * WebSocket client that records every reply with the encoding it came in.
 */
import { createServer, request, type Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import type { Duplex } from 'node:stream';
import WebSocket, { type RawData } from 'ws';
import {
	createIngestEndpoint,
	type IngestEndpoint,
	type IngestEndpointOptions
} from '../../server-ws/ingest/endpoint';
import { createInProcessPubSub, type PubSub, type RunEvent } from '../../server-ws/pubsub';
import { seededRandom } from '../../src/lib/random';
import { decodeMessage, encodeMessage } from '../../src/lib/protocol/codec';
import type { Encoding } from '../../src/lib/protocol/types';
import { MemoryIngestStore } from './memory-store';

export const KEY = 'sk_test_good';
export const OTHER_KEY = 'sk_test_other';

export interface TestServer {
	url: string;
	port: number;
	store: MemoryIngestStore;
	pubsub: PubSub<RunEvent>;
	endpoint: IngestEndpoint;
	/** server-side TCP sockets of every upgrade so far */
	sockets: Set<Duplex>;
	/** cuts every connection from the server side, without any closing handshake */
	dropAll(): void;
	stop(): Promise<void>;
}

export async function startServer(
	options: Partial<Omit<IngestEndpointOptions, 'store'>> = {}
): Promise<TestServer> {
	const store = new MemoryIngestStore();
	store.addKey(KEY, 'key-1', 'rig-1');
	store.addKey(OTHER_KEY, 'key-2', 'rig-2');
	store.addKey('sk_test_revoked', 'key-3', 'rig-1', { revoked: true });
	store.addKey('sk_test_expired', 'key-4', 'rig-1', { expiresAt: Date.now() - 1000 });
	const pubsub = createInProcessPubSub<RunEvent>();
	const endpoint = createIngestEndpoint({
		store,
		pubsub,
		onError: () => {},
		...options,
		timing: { graceMs: 300, batchDelayMs: 2, ...options.timing }
	});
	const sockets = new Set<Duplex>();
	const server: Server = createServer((_req, res) => {
		res.statusCode = 404;
		res.end();
	});
	server.on('upgrade', (req, socket, head) => {
		sockets.add(socket);
		socket.on('close', () => sockets.delete(socket));
		if (!endpoint.handleUpgrade(req, socket, head)) socket.destroy();
	});
	await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', resolve));
	const port = (server.address() as AddressInfo).port;
	return {
		url: `ws://127.0.0.1:${port}/ingest/v1`,
		port,
		store,
		pubsub,
		endpoint,
		sockets,
		dropAll() {
			for (const s of sockets) s.destroy();
		},
		async stop() {
			for (const s of sockets) s.destroy();
			await endpoint.close();
			await new Promise<void>((resolve) => server.close(() => resolve()));
		}
	};
}

export interface Reply {
	msg: Record<string, unknown>;
	encoding: Encoding;
}

export class RawClient {
	readonly ws: WebSocket;
	readonly replies: Reply[] = [];
	readonly closed: Promise<{ code: number; reason: string }>;
	#cursor = 0;
	#wake: (() => void) | null = null;

	constructor(ws: WebSocket) {
		this.ws = ws;
		ws.on('message', (data: RawData, isBinary: boolean) => {
			const d = decodeMessage(data as Buffer, isBinary);
			if (d.ok) this.replies.push({ msg: d.msg, encoding: d.encoding });
			this.#wake?.();
		});
		this.closed = new Promise((resolve) => {
			ws.on('close', (code, reason) => {
				resolve({ code, reason: reason.toString() });
				this.#wake?.();
			});
		});
		ws.on('error', () => {});
	}

	static async connect(url: string, key: string | null = KEY): Promise<RawClient> {
		const ws = new WebSocket(
			url,
			key === null ? {} : { headers: { Authorization: `Bearer ${key}` } }
		);
		await new Promise<void>((resolve, reject) => {
			ws.once('open', () => resolve());
			ws.once('error', reject);
		});
		return new RawClient(ws);
	}

	send(msg: object, encoding: Encoding): void {
		this.ws.send(encodeMessage(msg, encoding));
	}

	/** The next reply (after those already taken) matching `match`; earlier non-matching ones are skipped. */
	async next(
		match: (msg: Record<string, unknown>) => boolean = () => true,
		timeoutMs = 3000
	): Promise<Reply> {
		const deadline = Date.now() + timeoutMs;
		for (;;) {
			while (this.#cursor < this.replies.length) {
				const reply = this.replies[this.#cursor++];
				if (match(reply.msg)) return reply;
			}
			const left = deadline - Date.now();
			if (left <= 0)
				throw new Error(`no matching reply; got ${JSON.stringify(this.replies.map((r) => r.msg))}`);
			await new Promise<void>((resolve) => {
				const timer = setTimeout(resolve, left);
				this.#wake = () => {
					clearTimeout(timer);
					this.#wake = null;
					resolve();
				};
			});
		}
	}

	nextOfType(type: string, timeoutMs?: number): Promise<Reply> {
		return this.next((m) => m.type === type, timeoutMs);
	}

	nextAck(seq: number, timeoutMs?: number): Promise<Reply> {
		return this.next(
			(m) => m.type === 'ack' && typeof m.seq === 'number' && m.seq >= seq,
			timeoutMs
		);
	}

	/** Replies seen so far that match, without moving the cursor. */
	seen(match: (msg: Record<string, unknown>) => boolean): Record<string, unknown>[] {
		return this.replies.filter((r) => match(r.msg)).map((r) => r.msg);
	}
}

/** Performs an upgrade by hand and returns the HTTP answer when it is not a 101. */
export function rawUpgrade(
	port: number,
	headers: Record<string, string>
): Promise<{ status: number; body: string; upgraded: boolean }> {
	return new Promise((resolve, reject) => {
		const req = request({
			host: '127.0.0.1',
			port,
			path: '/ingest/v1',
			headers: {
				Connection: 'Upgrade',
				Upgrade: 'websocket',
				'Sec-WebSocket-Version': '13',
				'Sec-WebSocket-Key': 'dGhlIHNhbXBsZSBub25jZQ==',
				...headers
			}
		});
		req.on('upgrade', (res, socket) => {
			socket.destroy();
			resolve({ status: res.statusCode ?? 0, body: '', upgraded: true });
		});
		req.on('response', (res) => {
			let body = '';
			res.setEncoding('utf8');
			res.on('data', (c: string) => (body += c));
			res.on('end', () => resolve({ status: res.statusCode ?? 0, body, upgraded: false }));
		});
		req.on('error', reject);
		req.end();
	});
}

export const RUN = {
	name: 'bench rig, loop 3',
	state_fields: ['x', 'y', 'vx', 'vy'],
	measurement_fields: ['x', 'y'],
	coords: 'world' as const,
	tags: ['socket-test']
};

export function openMsg(clientRunId?: string): Record<string, unknown> {
	return clientRunId === undefined
		? { type: 'open', run: RUN }
		: { type: 'open', client_run_id: clientRunId, run: RUN };
}

export function frameMsg(
	seq: number,
	extra: Record<string, unknown> = {}
): Record<string, unknown> {
	return {
		type: 'frame',
		seq,
		t: 1_700_000_000 + seq * 0.05,
		estimates: [
			{
				id: seq % 7,
				x: [seq, 1, 0.5, 0],
				P: [1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1],
				r: 0.8
			}
		],
		...extra
	};
}

/** Deterministic pseudo-random numbers in [0, 1). */
export const seeded = seededRandom;

export function sleep(ms: number): Promise<void> {
	return new Promise((resolve) => setTimeout(resolve, ms));
}

export async function until(
	cond: () => boolean,
	timeoutMs = 5000,
	what = 'condition'
): Promise<void> {
	const deadline = Date.now() + timeoutMs;
	while (!cond()) {
		if (Date.now() > deadline) throw new Error(`timed out waiting for ${what}`);
		await sleep(5);
	}
}
