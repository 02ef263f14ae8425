import { Packr } from 'msgpackr';
import { afterEach, describe, expect, it } from 'vitest';
import WebSocket from 'ws';
import { closeSocketsForKey } from '../../server-ws/ingest/endpoint';
import type { RunEvent } from '../../server-ws/pubsub';
import { SkeinAuthError, SkeinRigClient, type RigClientEvent } from '../../src/lib/protocol/client';
import { fromMsgpack } from '../../src/lib/protocol/codec';
import type { Encoding, Frame } from '../../src/lib/protocol/types';
import {
	KEY,
	OTHER_KEY,
	RUN,
	RawClient,
	frameMsg,
	openMsg,
	rawUpgrade,
	seeded,
	sleep,
	startServer,
	until,
	type TestServer
} from './harness';

let server: TestServer | null = null;

async function serve(options?: Parameters<typeof startServer>[0]): Promise<TestServer> {
	server = await startServer(options);
	return server;
}

afterEach(async () => {
	await server?.stop();
	server = null;
});

async function opened(s: TestServer, encoding: Encoding, clientRunId?: string) {
	const c = await RawClient.connect(s.url);
	c.send(openMsg(clientRunId), encoding);
	const reply = await c.nextOfType('opened');
	return { c, runId: reply.msg.run_id as string, reply };
}

describe('upgrade and feed keys', () => {
	it.each([
		['no Authorization header', {}, 'missing feed key'],
		['an unknown key', { Authorization: 'Bearer nope' }, 'unknown feed key'],
		['a revoked key', { Authorization: 'Bearer sk_test_revoked' }, 'feed key revoked'],
		['an expired key', { Authorization: 'Bearer sk_test_expired' }, 'feed key expired'],
		['a malformed header', { Authorization: `Basic ${KEY}` }, 'missing feed key']
	])('refuses %s with 401, a one-line reason and no socket', async (_name, headers, reason) => {
		const s = await serve();
		const answer = await rawUpgrade(s.port, headers);
		expect(answer.upgraded).toBe(false);
		expect(answer.status).toBe(401);
		expect(answer.body).toMatch(new RegExp(`^${reason}[^\\n]*\\n$`));
		expect(s.endpoint.connections).toBe(0);
	});

	it('accepts a good key and records its use', async () => {
		const s = await serve();
		const answer = await rawUpgrade(s.port, { Authorization: `Bearer ${KEY}` });
		expect(answer).toMatchObject({ status: 101, upgraded: true });
		await until(() => s.store.keys.get(KEY)?.lastUsed !== null, 1000, 'touchKey');
	});

	it('the rig client stops at once on a refused key instead of retrying', async () => {
		const s = await serve();
		const client = new SkeinRigClient({
			url: s.url,
			key: 'wrong',
			clientRunId: 'r',
			run: RUN,
			backoff: { minMs: 10 }
		});
		const events: RigClientEvent[] = [];
		client.on((e) => events.push(e));
		const error = await client.start().catch((e: unknown) => e);
		expect(error).toBeInstanceOf(SkeinAuthError);
		expect((error as Error).message).toBe('feed key refused: unknown feed key');
		await sleep(100);
		expect(client.stats.reconnects).toBe(0);
		expect(events.map((e) => e.type)).toEqual(['fatal']);
		expect(() => client.send({ t: 0 })).toThrow(SkeinAuthError);
	});
});

describe.each(['msgpack', 'json'] as const)('conformance over %s', (encoding) => {
	it('open → opened, frames → cumulative ack, close → closed and 1000', async () => {
		const s = await serve();
		const { c, runId, reply } = await opened(s, encoding, 'conf-1');
		expect(reply.encoding).toBe(encoding);
		expect(reply.msg).toEqual({ type: 'opened', run_id: runId, next_seq: 0, window: 256 });
		c.send(frameMsg(0, { estimates: [], measurements: undefined }), encoding);
		for (let seq = 1; seq < 10; seq++)
			c.send(frameMsg(seq, { truth: [{ id: 'gt', x: [1, 2, 3, 4] }] }), encoding);
		const ack = await c.nextAck(9);
		expect(ack.encoding).toBe(encoding);
		expect(ack.msg).toEqual({ type: 'ack', seq: 9 });
		expect(s.store.seqs(runId)).toEqual([0, 1, 2, 3, 4, 5, 6, 7, 8, 9]);
		expect(s.store.run(runId).state).toBe('live');

		// absent and empty sets survive storage, both in the parsed frame and in the stored bytes
		const first = s.store.run(runId).frames.get(0);
		expect(first?.frame.estimates).toEqual([]);
		expect(first?.frame.truth).toBeUndefined();
		const raw = fromMsgpack(first?.raw ?? new Uint8Array()) as Record<string, unknown>;
		expect(raw.estimates).toEqual([]);
		expect('truth' in raw).toBe(false);
		expect('measurements' in raw).toBe(false);
		expect(raw).toEqual(frameMsg(0, { estimates: [] }));

		c.send({ type: 'close' }, encoding);
		const closed = await c.nextOfType('closed');
		expect(closed.encoding).toBe(encoding);
		expect(closed.msg).toEqual({ type: 'closed', run_id: runId, frames: 10 });
		expect(await c.closed).toEqual({ code: 1000, reason: 'run closed' });
		expect(s.store.run(runId).state).toBe('ended');
	});

	it('re-acknowledges duplicates without storing them again', async () => {
		const s = await serve();
		const { c, runId } = await opened(s, encoding);
		for (let seq = 0; seq < 5; seq++) c.send(frameMsg(seq), encoding);
		await c.nextAck(4);
		c.send(frameMsg(2), encoding);
		expect((await c.nextOfType('ack')).msg).toEqual({ type: 'ack', seq: 4 });
		c.send(frameMsg(0, { t: 5 }), encoding);
		expect((await c.nextOfType('ack')).msg).toEqual({ type: 'ack', seq: 4 });
		expect(s.store.seqs(runId)).toEqual([0, 1, 2, 3, 4]);
		expect(s.store.violations).toEqual([]);
	});

	it('answers a gap with seq_gap and next_seq, storing nothing', async () => {
		const s = await serve();
		const { c, runId } = await opened(s, encoding);
		c.send(frameMsg(0), encoding);
		c.send(frameMsg(3), encoding);
		const err = await c.nextOfType('error');
		expect(err.encoding).toBe(encoding);
		expect(err.msg).toEqual({
			type: 'error',
			code: 'seq_gap',
			message: 'expected seq 1, got 3',
			seq: 3,
			next_seq: 1
		});
		c.send(frameMsg(1), encoding);
		await c.nextAck(1);
		expect(s.store.seqs(runId)).toEqual([0, 1]);
	});

	it('quarantines an invalid frame, names the path, consumes and acknowledges its seq', async () => {
		const s = await serve();
		const { c, runId } = await opened(s, encoding);
		c.send(frameMsg(0), encoding);
		const bad = frameMsg(1, {
			estimates: [
				{ x: [0, 0, 0, 0] },
				{ x: [0, 0, 0, 0] },
				{ x: [0, 0, 0, 0] },
				{ x: [0, 0, 0, 0], P: [1, 0, 0] }
			]
		});
		c.send(bad, encoding);
		const err = await c.nextOfType('error');
		expect(err.msg).toEqual({
			type: 'error',
			code: 'invalid_frame',
			message: 'estimates[3].P: length 3, expected 16',
			seq: 1
		});
		c.send(frameMsg(2), encoding);
		await c.nextAck(2);
		expect(s.store.seqs(runId)).toEqual([0, 2]);
		const q = s.store.run(runId).quarantine.get(1);
		expect(q?.reason).toBe('estimates[3].P: length 3, expected 16');
		expect(q?.encoding).toBe(encoding);
		const sent =
			encoding === 'json'
				? new TextEncoder().encode(JSON.stringify(bad))
				: new Packr({ useRecords: false, variableMapSize: true }).pack(bad);
		expect(Buffer.from(q?.raw ?? []).equals(Buffer.from(sent))).toBe(true);
	});

	it('quarantines a frame whose t goes backwards', async () => {
		const s = await serve();
		const { c, runId } = await opened(s, encoding);
		c.send(frameMsg(0, { t: 100 }), encoding);
		c.send(frameMsg(1, { t: 100 }), encoding);
		c.send(frameMsg(2, { t: 99.5 }), encoding);
		const err = await c.nextOfType('error');
		expect(err.msg).toMatchObject({
			code: 'invalid_frame',
			seq: 2,
			message: "t: 99.5 is before the previous frame's t 100"
		});
		c.send(frameMsg(3, { t: 100.1 }), encoding);
		await c.nextAck(3);
		expect(s.store.seqs(runId)).toEqual([0, 1, 3]);
		expect([...s.store.run(runId).quarantine.keys()]).toEqual([2]);
	});

	it('answers undecodable, non-map and unknown messages with bad_message and stays open', async () => {
		const s = await serve();
		const { c, runId } = await opened(s, encoding);
		if (encoding === 'json') {
			c.ws.send('{"type": "frame", ');
			c.ws.send('[1, 2, 3]');
		} else {
			c.ws.send(Buffer.from([0xc1, 0x00, 0xff]));
			c.ws.send(new Packr({ useRecords: false }).pack([1, 2, 3]));
		}
		c.send({ type: 'hello' }, encoding);
		c.send({ kind: 'frame' }, encoding);
		const errors = [];
		for (let i = 0; i < 4; i++) errors.push((await c.nextOfType('error')).msg);
		expect(errors.map((e) => e.code)).toEqual([
			'bad_message',
			'bad_message',
			'bad_message',
			'bad_message'
		]);
		expect(errors[1].message).toBe('not a map');
		expect(errors[2].message).toBe('unknown message type "hello"');
		expect(errors[3].message).toBe('field "type" missing or not a string');
		c.send(frameMsg(0), encoding);
		await c.nextAck(0);
		expect(s.store.seqs(runId)).toEqual([0]);
	});

	it('answers frames and close before open with not_open', async () => {
		const s = await serve();
		const c = await RawClient.connect(s.url);
		c.send(frameMsg(0), encoding);
		expect((await c.nextOfType('error')).msg).toEqual({
			type: 'error',
			code: 'not_open',
			message: 'send open and wait for opened first',
			seq: 0
		});
		c.send({ type: 'close' }, encoding);
		expect((await c.nextOfType('error')).msg).toMatchObject({ code: 'not_open' });
	});

	it('answers a bad open with invalid_open naming the path', async () => {
		const s = await serve();
		const c = await RawClient.connect(s.url);
		c.send({ type: 'open', run: { ...RUN, state_fields: ['x', 'vx'] } }, encoding);
		expect((await c.nextOfType('error')).msg).toEqual({
			type: 'error',
			code: 'invalid_open',
			message: 'run.state_fields: must contain "y"'
		});
		c.send(openMsg('after-bad-open'), encoding);
		await c.nextOfType('opened');
	});

	it('refuses a message over the size limit with too_large, then closes with 1009', async () => {
		const s = await serve({ limits: { maxMessageBytes: 64 * 1024 } });
		const { c } = await opened(s, encoding);
		// between the limit and twice the limit: read, refused politely, then closed
		const big = frameMsg(0, {
			measurements: Array.from({ length: encoding === 'json' ? 3500 : 6000 }, (_, i) => ({
				z: [i + 0.123456789, i]
			}))
		});
		c.send(big, encoding);
		const err = await c.nextOfType('error');
		expect(err.msg).toMatchObject({ type: 'error', code: 'too_large' });
		expect(String(err.msg.message)).toMatch(/over the limit of 65536 bytes/);
		expect((await c.closed).code).toBe(1009);
	});
});

describe('limits beyond the protocol messages', () => {
	it('catches NaN sent over MessagePack', async () => {
		const s = await serve();
		const { c } = await opened(s, 'msgpack');
		c.send(frameMsg(0, { ego: { x: NaN, y: 0, heading: 0 } }), 'msgpack');
		expect((await c.nextOfType('error')).msg).toMatchObject({
			code: 'invalid_frame',
			message: 'ego.x: expected a finite number, got NaN'
		});
	});

	it('cuts a message far over the limit with 1009 without reading it', async () => {
		const s = await serve({ limits: { maxMessageBytes: 1024 } });
		const { c } = await opened(s, 'msgpack');
		c.ws.send(Buffer.alloc(4096, 0x90));
		expect((await c.closed).code).toBe(1009);
	});

	it.each(['msgpack', 'json'] as const)(
		'rate-limits frames more than a window ahead of the last ack (%s)',
		async (encoding) => {
			const s = await serve({ timing: { window: 64 } });
			s.store.commitDelayMs = 300;
			const { c, runId } = await opened(s, encoding);
			for (let seq = 0; seq <= 64; seq++) c.send(frameMsg(seq), encoding);
			const err = await c.nextOfType('error');
			expect(err.msg).toMatchObject({ code: 'rate_limited', seq: 64 });
			await c.nextAck(63, 5000);
			c.send(frameMsg(64), encoding);
			await c.nextAck(64, 5000);
			expect(s.store.seqs(runId)).toHaveLength(65);
		}
	);

	it('acks at least every 250 ms while frames wait for a slow commit', async () => {
		const s = await serve();
		const { c } = await opened(s, 'json');
		c.send(frameMsg(0), 'json');
		await c.nextAck(0);
		s.store.commitDelayMs = 700;
		c.send(frameMsg(1), 'json');
		const started = Date.now();
		const heartbeat = await c.nextOfType('ack', 400);
		expect(heartbeat.msg.seq).toBe(0);
		expect(Date.now() - started).toBeLessThan(400);
		await c.nextAck(1, 2000);
	});
});

describe('drops, grace period and resume', () => {
	it('cuts a connection that stops answering pings and starts the grace period', async () => {
		const s = await serve({ timing: { pingIntervalMs: 50, graceMs: 10_000 } });
		const ws = new WebSocket(s.url, {
			headers: { Authorization: `Bearer ${KEY}` },
			autoPong: false
		});
		const c = new RawClient(ws);
		await new Promise((resolve) => ws.once('open', resolve));
		c.send(openMsg('silent'), 'json');
		const runId = (await c.nextOfType('opened')).msg.run_id as string;
		expect((await c.closed).code).toBe(1006);
		await until(() => s.endpoint.connections === 0, 1000, 'server-side close');
		expect(s.endpoint.runs.get(runId)?.listener).toBeNull();
		expect(s.store.run(runId).state).toBe('live');
	});

	it('keeps a dropped run live for the grace period, then interrupted, and resumes it later', async () => {
		const s = await serve();
		const { c, runId } = await opened(s, 'msgpack', 'grace-1');
		for (let seq = 0; seq < 3; seq++) c.send(frameMsg(seq), 'msgpack');
		await c.nextAck(2);
		s.dropAll();
		await c.closed;
		await sleep(100);
		expect(s.store.run(runId).state).toBe('live');
		await until(() => s.store.run(runId).state === 'interrupted', 2000, 'interrupted');
		const again = await opened(s, 'json', 'grace-1');
		expect(again.reply.msg).toMatchObject({ run_id: runId, next_seq: 3 });
		expect(s.store.run(runId).state).toBe('live');
		again.c.send(frameMsg(3), 'json');
		await again.c.nextAck(3);
		expect(s.store.seqs(runId)).toEqual([0, 1, 2, 3]);
	});

	it('resumes during the grace period, counting quarantined seqs as consumed', async () => {
		const s = await serve({ timing: { graceMs: 5000 } });
		const { c, runId } = await opened(s, 'msgpack', 'grace-2');
		c.send(frameMsg(0), 'msgpack');
		c.send(frameMsg(1, { t: 'late' }), 'msgpack');
		await c.nextAck(1);
		c.ws.terminate();
		const again = await opened(s, 'msgpack', 'grace-2');
		expect(again.reply.msg).toMatchObject({ run_id: runId, next_seq: 2 });
		expect(s.store.run(runId).stateHistory).toEqual(['live']);
	});

	it('a second connection resuming the same run takes it over (4002 for the first)', async () => {
		const s = await serve();
		const first = await opened(s, 'msgpack', 'takeover');
		first.c.send(frameMsg(0), 'msgpack');
		first.c.send(frameMsg(1), 'msgpack');
		const second = await opened(s, 'msgpack', 'takeover');
		expect(second.reply.msg).toMatchObject({ run_id: first.runId, next_seq: 2 });
		expect(await first.c.closed).toEqual({
			code: 4002,
			reason: 'run resumed on another connection'
		});
		second.c.send(frameMsg(2), 'msgpack');
		await second.c.nextAck(2);
		expect(s.store.seqs(first.runId)).toEqual([0, 1, 2]);
	});

	it('refuses to resume an ended run or with other fields', async () => {
		const s = await serve();
		const { c } = await opened(s, 'json', 'ended-1');
		c.send({ type: 'close' }, 'json');
		await c.nextOfType('closed');
		const c2 = await RawClient.connect(s.url);
		c2.send(openMsg('ended-1'), 'json');
		expect((await c2.nextOfType('error')).msg).toMatchObject({
			code: 'invalid_open',
			message: expect.stringMatching(/ended/)
		});
		await opened(s, 'json', 'fields-1');
		c2.send(
			{ type: 'open', client_run_id: 'fields-1', run: { ...RUN, state_fields: ['x', 'y'] } },
			'json'
		);
		expect((await c2.nextOfType('error')).msg).toMatchObject({
			code: 'invalid_open',
			message: expect.stringMatching(/must equal those of the run being resumed/)
		});
	});

	it('open without client_run_id always starts a new run', async () => {
		const s = await serve();
		const a = await opened(s, 'json');
		const b = await opened(s, 'json');
		expect(a.runId).not.toBe(b.runId);
	});

	it('storage failure closes with 1011; the rig client resumes and nothing is lost or doubled', async () => {
		const s = await serve();
		const client = new SkeinRigClient({
			url: s.url,
			key: KEY,
			clientRunId: 'db-down',
			run: RUN,
			backoff: { minMs: 20, maxMs: 100 }
		});
		const codes: number[] = [];
		client.on((e) => {
			if (e.type === 'disconnected') codes.push(e.code);
		});
		const { runId } = await client.start();
		for (let i = 0; i < 50; i++) client.send({ t: i });
		await client.flush();
		s.store.failCommits = 2;
		for (let i = 50; i < 100; i++) client.send({ t: i });
		const result = await client.close();
		expect(result).toEqual({ run_id: runId, frames: 100 });
		expect(codes).toContain(1011);
		expect(s.store.seqs(runId)).toEqual(Array.from({ length: 100 }, (_, i) => i));
		expect(s.store.violations).toEqual([]);
	});
});

describe('the rig client', () => {
	it.each(['msgpack', 'json'] as const)(
		'streams, honours the window and closes (%s)',
		async (encoding) => {
			const s = await serve({ timing: { window: 64 } });
			s.store.commitDelayMs = 5;
			const client = new SkeinRigClient({
				url: s.url,
				key: KEY,
				encoding,
				clientRunId: `stream-${encoding}`,
				run: RUN
			});
			const errors: RigClientEvent[] = [];
			let maxAhead = 0;
			client.on((e) => {
				if (e.type === 'server-error') errors.push(e);
			});
			const queuedBefore = client.send({ t: 0, estimates: [] });
			expect(queuedBefore).toBeNull();
			const { runId } = await client.start();
			for (let i = 1; i < 500; i++) {
				const seq = client.send({ t: i * 0.1, truth: [{ id: i, x: [i, 0, 0, 0] }] });
				expect(seq).toBe(i);
				const st = client.stats;
				maxAhead = Math.max(maxAhead, st.inFlight);
			}
			expect(maxAhead).toBeLessThanOrEqual(64);
			const result = await client.close();
			expect(result).toEqual({ run_id: runId, frames: 500 });
			expect(errors).toEqual([]);
			expect(s.store.seqs(runId)).toHaveLength(500);
			expect(s.store.run(runId).frames.get(0)?.frame.estimates).toEqual([]);
			expect(s.store.run(runId).frames.get(0)?.frame.truth).toBeUndefined();
			expect(s.store.run(runId).state).toBe('ended');
			expect(client.stats).toMatchObject({ ackedSeq: 499, queued: 0 });
		}
	);

	it('survives 20 drops at random points: every frame stored exactly once, in order', async () => {
		const s = await serve({ timing: { window: 64, graceMs: 10_000 } });
		const random = seeded(42);
		const client = new SkeinRigClient({
			url: s.url,
			key: KEY,
			clientRunId: 'drops',
			run: RUN,
			backoff: { minMs: 5, maxMs: 40 },
			random
		});
		const events: string[] = [];
		client.on((e) => {
			if (e.type === 'server-error' || e.type === 'fatal') events.push(JSON.stringify(e));
		});
		const { runId } = await client.start();
		const total = 3000;
		let drops = 0;
		let sent = 0;
		while (sent < total) {
			const burst = 1 + Math.floor(random() * 120);
			for (let i = 0; i < burst && sent < total; i++, sent++) {
				client.send({
					t: 1_700_000_000 + sent / 100,
					estimates: [{ id: sent, x: [sent, 0, 0, 0] }]
				});
			}
			if (drops < 20 && random() < 0.6) {
				await sleep(Math.floor(random() * 15));
				if (s.sockets.size > 0) {
					s.dropAll();
					drops++;
				}
			}
			await sleep(Math.floor(random() * 5));
		}
		while (drops < 20) {
			await until(() => client.stats.connected, 2000, 'reconnect');
			s.dropAll();
			drops++;
		}
		const result = await client.close();
		expect(events).toEqual([]);
		expect(client.stats.reconnects).toBeGreaterThanOrEqual(20);
		expect(result).toEqual({ run_id: runId, frames: total });
		const run = s.store.run(runId);
		expect(s.store.seqs(runId)).toEqual(Array.from({ length: total }, (_, i) => i));
		for (let i = 0; i < total; i++) {
			const stored = fromMsgpack(run.frames.get(i)?.raw ?? new Uint8Array()) as Frame;
			expect(stored.estimates?.[0].id).toBe(i);
		}
		expect(run.quarantine.size).toBe(0);
		expect(s.store.violations).toEqual([]);
	});

	it('a second rig streaming at the same time loses nothing while the first sends garbage', async () => {
		const s = await serve();
		const random = seeded(7);
		const good = new SkeinRigClient({ url: s.url, key: OTHER_KEY, clientRunId: 'good', run: RUN });
		const goodErrors: RigClientEvent[] = [];
		good.on((e) => {
			if (e.type === 'server-error' || e.type === 'fatal') goodErrors.push(e);
		});
		const { runId } = await good.start();
		const bad = await opened(s, 'msgpack', 'bad');
		let garbage = 0;
		const noise = (async () => {
			for (let i = 0; i < 400; i++) {
				const kind = i % 5;
				if (kind === 0)
					bad.c.ws.send(
						Buffer.from(Array.from({ length: 1 + (i % 50) }, () => Math.floor(random() * 256)))
					);
				else if (kind === 1) bad.c.ws.send('{"type":"frame","seq":');
				else if (kind === 2) bad.c.send(frameMsg(1000 + i), 'msgpack');
				else if (kind === 3) bad.c.send({ type: 'frame', seq: i, t: 'x' }, 'json');
				else bad.c.send({ type: 'open', run: {} }, 'msgpack');
				garbage++;
				if (i % 20 === 0) await sleep(1);
			}
		})();
		for (let i = 0; i < 1500; i++) {
			good.send({ t: i, measurements: [{ z: [i, -i] }] });
			if (i % 100 === 0) await sleep(1);
		}
		await noise;
		const result = await good.close();
		expect(garbage).toBe(400);
		expect(result).toEqual({ run_id: runId, frames: 1500 });
		expect(goodErrors).toEqual([]);
		expect(s.store.seqs(runId)).toEqual(Array.from({ length: 1500 }, (_, i) => i));
		expect(bad.c.ws.readyState).toBe(bad.c.ws.OPEN);
		expect(s.store.violations).toEqual([]);
	});

	it('revoking the key closes its sockets within 1 s with 4001 and stops the client', async () => {
		const s = await serve();
		const client = new SkeinRigClient({
			url: s.url,
			key: KEY,
			clientRunId: 'revoked',
			run: RUN,
			backoff: { minMs: 10 }
		});
		let fatal: Error | null = null;
		client.on((e) => {
			if (e.type === 'fatal') fatal = e.error;
		});
		await client.start();
		const raw = await opened(s, 'json', 'revoked-raw');
		const other = await RawClient.connect(s.url, OTHER_KEY);
		const started = Date.now();
		s.store.keys.get(KEY)!.revoked = true;
		expect(closeSocketsForKey('key-1')).toBe(2);
		expect(await raw.c.closed).toEqual({ code: 4001, reason: 'key revoked' });
		await until(() => fatal !== null, 1000, 'client fatal');
		expect(Date.now() - started).toBeLessThan(1000);
		expect(fatal).toBeInstanceOf(SkeinAuthError);
		expect(other.ws.readyState).toBe(other.ws.OPEN);
		expect(client.stats.reconnects).toBe(0);
	});

	it('throws on a frame too large to ever be accepted', async () => {
		const s = await serve();
		const client = new SkeinRigClient({
			url: s.url,
			key: KEY,
			clientRunId: 'big',
			run: RUN,
			maxMessageBytes: 1000
		});
		await client.start();
		expect(() =>
			client.send({ t: 0, measurements: Array.from({ length: 200 }, (_, i) => ({ z: [i, i] })) })
		).toThrow(/over the limit of 1000/);
		expect(client.send({ t: 0 })).toBe(0);
		await client.close();
	});

	it('resumes after a process restart: a new client with the same client_run_id continues the numbering', async () => {
		const s = await serve({ timing: { graceMs: 10_000 } });
		const a = new SkeinRigClient({ url: s.url, key: KEY, clientRunId: 'restart', run: RUN });
		const { runId } = await a.start();
		for (let i = 0; i < 10; i++) a.send({ t: i });
		await a.flush();
		a.abort();
		const b = new SkeinRigClient({ url: s.url, key: KEY, clientRunId: 'restart', run: RUN });
		b.send({ t: 10 });
		expect(await b.start()).toEqual({ runId, nextSeq: 10 });
		expect(b.send({ t: 11 })).toBe(11);
		expect(await b.close()).toEqual({ run_id: runId, frames: 12 });
	});
});

describe('publish/subscribe', () => {
	it('publishes every committed frame in order, and state changes', async () => {
		const s = await serve();
		const { c, runId } = await opened(s, 'msgpack', 'pub');
		const seen: RunEvent[] = [];
		const stop = s.pubsub.subscribe(runId, (e) => seen.push(e));
		for (let seq = 0; seq < 20; seq++) c.send(frameMsg(seq, seq === 7 ? { t: 0 } : {}), 'msgpack');
		await c.nextAck(19);
		c.send({ type: 'close' }, 'msgpack');
		await c.nextOfType('closed');
		stop();
		const frames = seen
			.filter((e) => e.kind === 'frame')
			.map((e) => (e.kind === 'frame' ? e.seq : -1));
		expect(frames).toEqual(Array.from({ length: 20 }, (_, i) => i).filter((i) => i !== 7));
		expect(seen.find((e) => e.kind === 'quarantined')).toMatchObject({ seq: 7 });
		expect(seen.at(-1)).toEqual({ kind: 'state', runId, state: 'ended' });
	});
});
