/**
 * The shared upgrade dispatch and heartbeat (server-ws/upgrade.ts) on a real HTTP server on loopback: a handler
 * that throws costs that one socket a 500 and nothing else, a path nobody takes is a 404 unless another upgrade
 * listener is there to take it, and the heartbeat cuts exactly the sockets that stop answering pings.
 */
import { createServer, type Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import { afterEach, describe, expect, it } from 'vitest';
import WebSocket, { WebSocketServer } from 'ws';
import { dispatchUpgrades, Heartbeat, refuse, type UpgradeHandler } from '../../server-ws/upgrade';
import { exchange, rawRequest } from '../support/raw-socket';
import { sleep, until } from './harness';

let server: Server | null = null;

afterEach(async () => {
	const s = server;
	server = null;
	if (s) await new Promise<void>((r) => s.close(() => r()));
});

async function serve(handlers: UpgradeHandler[], errors: string[] = []): Promise<number> {
	server = createServer((_req, res) => res.end());
	dispatchUpgrades(server, handlers, (_e, context) => errors.push(context));
	await new Promise<void>((r) => server!.listen(0, '127.0.0.1', r));
	return (server.address() as AddressInfo).port;
}

const upgradeTo = (path: string) =>
	rawRequest('GET', path, [
		['Host', 'localhost'],
		['Upgrade', 'websocket'],
		['Connection', 'Upgrade'],
		['Sec-WebSocket-Version', '13'],
		['Sec-WebSocket-Key', 'dGhlIHNhbXBsZSBub25jZQ==']
	]);

describe('upgrade dispatch', () => {
	it('answers 500 to the socket whose handler throws, and keeps serving the others', async () => {
		const errors: string[] = [];
		const port = await serve(
			[
				(req) => {
					if (req.url === '/boom') throw new URIError('URI malformed');
					return false;
				},
				(req, socket) => {
					if (req.url !== '/fine') return false;
					refuse(socket, 418, 'fine');
					return true;
				}
			],
			errors
		);
		const boom = await exchange(port, upgradeTo('/boom'));
		expect(boom.status).toBe(500);
		expect(boom.rest.toString()).toBe('the upgrade could not be handled\n');
		expect(errors).toEqual(['upgrade handler threw for "/boom"']);
		expect((await exchange(port, upgradeTo('/fine'))).status).toBe(418);
	});

	it('answers 404 to a path no handler takes', async () => {
		const port = await serve([() => false]);
		const a = await exchange(port, upgradeTo('/nowhere'));
		expect(a.status).toBe(404);
		expect(a.rest.toString()).toBe('no socket endpoint at this path\n');
	});

	it('leaves a path nobody of ours takes to another upgrade listener (Vite in development)', async () => {
		const port = await serve([() => false]);
		server!.on('upgrade', (_req, socket) => refuse(socket, 426, 'the other listener'));
		const a = await exchange(port, upgradeTo('/@vite'));
		expect(a.status).toBe(426);
	});
});

describe('heartbeat', () => {
	it('cuts the socket that stops answering pings and keeps the one that answers', async () => {
		const wss = new WebSocketServer({ noServer: true });
		const beat = new Heartbeat(40);
		const port = await serve([
			(req, socket, head) => {
				wss.handleUpgrade(req, socket, head, (ws) => beat.watch(ws));
				return true;
			}
		]);
		const url = `ws://127.0.0.1:${port}/`;
		const answering = new WebSocket(url);
		const silent = new WebSocket(url, { autoPong: false });
		await Promise.all([answering, silent].map((ws) => new Promise((r) => ws.once('open', r))));
		let silentClosed = false;
		silent.once('close', () => (silentClosed = true));
		await until(() => silentClosed, 2000, 'the silent socket cut');
		await sleep(200);
		expect(answering.readyState).toBe(WebSocket.OPEN);
		beat.stop();
		answering.close();
		wss.close();
	});
});
