/**
 * The socket endpoints' answers to input a correct client never sends, against a real app process: broken
 * percent-encoding in paths, cookies and keys is a 4xx (never a dead process), an unknown path is a 404, a feed
 * key holds a bounded number of connections (INGEST_MAX_CONNECTIONS_PER_KEY), invalid UTF-8 text closes with
 * 1007, and a rotation without grace closes the old key's sockets as an expiry (docs/protocol.md §2, §10).
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import WebSocket from 'ws';
import { startApp, type RunningApp } from '../support/app';
import { Browserish } from '../support/client';
import { makePerson } from '../support/factories';
import {
	closeCodeIn,
	exchange,
	rawRequest,
	readUntilClosed,
	wsFrame,
	type RawHeader
} from '../support/raw-socket';
import { makeRigWithKey } from '../support/rigs';

let app: RunningApp;
let cookie: string;
let operator: Browserish;
const perKey = 2;

beforeAll(async () => {
	app = await startApp({ INGEST_MAX_CONNECTIONS_PER_KEY: String(perKey) });
	const p = await makePerson('operator', 'socket-hardening');
	operator = new Browserish(app.url);
	await operator.signIn(p.email, p.password);
	cookie = `skein_session=${operator.cookies.get('skein_session')}`;
}, 120_000);

afterAll(async () => {
	await app?.stop();
});

const handshake = (extra: RawHeader[]): RawHeader[] => [
	['Host', `127.0.0.1:${app.port}`],
	['Upgrade', 'websocket'],
	['Connection', 'Upgrade'],
	['Sec-WebSocket-Version', '13'],
	['Sec-WebSocket-Key', 'dGhlIHNhbXBsZSBub25jZQ=='],
	...extra
];

async function upgrade(path: string, extra: RawHeader[]) {
	const a = await exchange(app.port, rawRequest('GET', path, handshake(extra)));
	return { status: a.status, body: a.rest.toString('utf8'), answer: a };
}

const ingestUrl = () => `${app.url.replace('http', 'ws')}/ingest/v1`;

function connect(key: string): Promise<WebSocket | { status: number; body: string }> {
	return new Promise((resolve) => {
		const ws = new WebSocket(ingestUrl(), { headers: { authorization: `Bearer ${key}` } });
		ws.once('open', () => resolve(ws));
		ws.on('unexpected-response', (_req, res) => {
			let body = '';
			res.on('data', (c) => (body += c));
			res.on('end', () => resolve({ status: res.statusCode ?? 0, body }));
		});
		ws.on('error', () => {});
	});
}

const closeOf = (ws: WebSocket) =>
	new Promise<{ code: number; reason: string }>((r) =>
		ws.once('close', (code, reason) => r({ code, reason: String(reason) }))
	);

describe('malformed upgrades', () => {
	it('answers broken percent-encoding in a path, a cookie or a key with a 4xx, and stays up', async () => {
		expect(await upgrade('/live/%E0%A4%A', [['Cookie', cookie]])).toMatchObject({
			status: 404,
			body: 'no such run\n'
		});
		expect((await upgrade('/live/%E0%A4%A', [])).status).toBe(401);
		expect(await upgrade('/live', [['Cookie', 'skein_session=%E0%A4%A']])).toMatchObject({
			status: 401,
			body: 'session expired or signed out: sign in again\n'
		});
		// decodes to a NUL, which PostgreSQL cannot even be asked about: still a 401, not a 503
		expect((await upgrade('/live', [['Cookie', 'skein_session=%00abc']])).status).toBe(401);
		expect((await upgrade('/ingest/v1', [['Authorization', 'Bearer skf_%E0%A4%A']])).body).toBe(
			'unknown feed key\n'
		);
		expect(app.child.exitCode).toBeNull();
		expect((await fetch(`${app.url}/healthz`)).status).toBe(200);
	});

	it('answers an upgrade to a path without a socket endpoint with a 404', async () => {
		for (const path of ['/nowhere', '/@vite/client', '/ingest/v2', '/live/a/b'])
			expect(await upgrade(path, [['Cookie', cookie]]), path).toMatchObject({
				status: 404,
				body: 'no socket endpoint at this path\n'
			});
	});
});

describe('connections per feed key', () => {
	it('refuses to start with a limit that is not a whole number of at least 1, naming the variable', async () => {
		const outcome = await startApp({ INGEST_MAX_CONNECTIONS_PER_KEY: 'lots' }).then(
			async (started) => {
				await started.stop();
				return 'the app started';
			},
			(error: Error) => error.message
		);
		expect(outcome).toContain(
			'INGEST_MAX_CONNECTIONS_PER_KEY must be a whole number of at least 1, got "lots"'
		);
	});

	it(`holds at most ${perKey} per key, refuses the next with 429, and takes one again after a close`, async () => {
		const rig = await makeRigWithKey('per-key');
		const other = await makeRigWithKey('per-key-other');
		const open: WebSocket[] = [];
		for (let i = 0; i < perKey; i++) {
			const c = await connect(rig.secret);
			expect(c).toBeInstanceOf(WebSocket);
			open.push(c as WebSocket);
		}
		expect(await connect(rig.secret)).toEqual({
			status: 429,
			body: `too many connections with this feed key: at most ${perKey} at a time; close one first\n`
		});
		// another key is not affected
		const elsewhere = await connect(other.secret);
		expect(elsewhere).toBeInstanceOf(WebSocket);
		(elsewhere as WebSocket).close();

		const gone = closeOf(open[0]);
		open[0].close();
		await gone;
		let again = await connect(rig.secret);
		for (let i = 0; i < 20 && !(again instanceof WebSocket); i++) {
			await new Promise((r) => setTimeout(r, 50));
			again = await connect(rig.secret);
		}
		expect(again).toBeInstanceOf(WebSocket);
		for (const ws of [...open.slice(1), again as WebSocket]) ws.close();
	});
});

describe('close codes', () => {
	it('closes with 1007 on a text message that is not UTF-8, on ingest and on the viewer socket', async () => {
		const rig = await makeRigWithKey('utf8');
		for (const [path, extra] of [
			['/ingest/v1', [['Authorization', `Bearer ${rig.secret}`]]],
			['/live', [['Cookie', cookie]]]
		] as [string, RawHeader[]][]) {
			const { status, answer } = await upgrade(path, extra);
			expect(status, path).toBe(101);
			answer.socket.write(wsFrame({ opcode: 1, payload: Buffer.from([0x7b, 0xe0, 0xa4, 0x41]) }));
			const got = await readUntilClosed(answer.socket, answer.rest, 3000);
			expect(closeCodeIn(got), path).toBe(1007);
		}
	});

	it('closes the old key\'s sockets with 4001 "key expired" on a rotation without grace', async () => {
		const rig = await makeRigWithKey('rotate-now');
		const ws = (await connect(rig.secret)) as WebSocket;
		expect(ws).toBeInstanceOf(WebSocket);
		const closed = closeOf(ws);
		const res = await operator.json(`/api/keys/${rig.keyId}/rotate`, 'POST', { grace_minutes: 0 });
		expect(res.status).toBe(201);
		expect(await closed).toEqual({ code: 4001, reason: 'key expired' });
		expect(await connect(rig.secret)).toEqual({ status: 401, body: 'feed key expired\n' });
	});
});
