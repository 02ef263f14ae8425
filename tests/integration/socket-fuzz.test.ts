/**
 * Fuzzing every socket endpoint of a real app process (`/ingest/v1`, `/live`, `/live/{runId}`, and paths nobody
 * serves) over raw TCP on loopback: malformed paths, headers, cookies and keys on the upgrade request, and
 * malformed first messages (garbage bytes, invalid UTF-8 text, oversize, wrong types, broken frames) after it.
 * Whatever arrives, a complete request gets an HTTP answer — 101, or a refusal that is not a 5xx — and afterwards
 * the process is alive, answers /healthz and still ingests.
 *
 * Seeded and bounded: FUZZ_SEED reproduces a run, FUZZ_COUNT caps the requests, FUZZ_SECONDS the time.
 */
import { Packr } from 'msgpackr';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { SkeinRigClient } from '$lib/protocol/client';
import { seededRandom } from '$lib/random';
import { startApp, type RunningApp } from '../support/app';
import { Browserish } from '../support/client';
import { makePerson } from '../support/factories';
import {
	exchange,
	rawRequest,
	readUntilClosed,
	slam,
	wsFrame,
	type RawAnswer,
	type RawHeader
} from '../support/raw-socket';
import { makeRigWithKey } from '../support/rigs';

const seed = Number(process.env.FUZZ_SEED ?? 20_261_203);
const count = Number(process.env.FUZZ_COUNT ?? 400);
const seconds = Number(process.env.FUZZ_SECONDS ?? 40);
const parallel = 8;
/** the fuzzed app's message limit: small, so oversize messages are cheap to send */
const maxMessageBytes = 16 * 1024;

const run = { name: 'fuzz bystander', state_fields: ['x', 'y'], measurement_fields: ['x', 'y'] };
const packr = new Packr({ useRecords: false, structuredClone: false });

let app: RunningApp;
let keys: string[];
let sessionCookie: string;
let runId: string;
let bystander: SkeinRigClient;
let bystanderSeq = 0;

beforeAll(async () => {
	app = await startApp({
		INGEST_MAX_MESSAGE_BYTES: String(maxMessageBytes),
		INGEST_MAX_CONNECTIONS_PER_KEY: '3'
	});
	keys = [];
	for (const tag of ['fuzz-a', 'fuzz-b', 'fuzz-c']) keys.push((await makeRigWithKey(tag)).secret);
	const p = await makePerson('viewer', 'fuzz-viewer');
	const b = new Browserish(app.url);
	await b.signIn(p.email, p.password);
	sessionCookie = `skein_session=${b.cookies.get('skein_session')}`;
	// a rig streaming through it all, on its own key: it must not notice the fuzz
	const rig = await makeRigWithKey('fuzz-bystander');
	bystander = new SkeinRigClient({
		url: `${app.url.replace('http', 'ws')}/ingest/v1`,
		key: rig.secret,
		clientRunId: 'bystander',
		run
	});
	({ runId } = await bystander.start());
	for (; bystanderSeq < 5; bystanderSeq++)
		bystander.send({ t: 1_790_000_000 + bystanderSeq, estimates: [], truth: [] });
	await bystander.flush();
}, 120_000);

afterAll(async () => {
	bystander?.abort();
	await app?.stop();
});

function makeFuzzer(rand: () => number) {
	const int = (n: number) => Math.floor(rand() * n);
	const pick = <T>(xs: readonly T[]): T => xs[int(xs.length)];
	const bytes = (n: number) => Buffer.from(Array.from({ length: n }, () => int(256)));
	const latin1 = (b: Buffer) => b.toString('latin1');
	const wsKey = () => bytes(16).toString('base64');
	const junkPercent = () =>
		Array.from({ length: 1 + int(6) }, () =>
			pick(['%', '%E0', '%A4', '%A', '%zz', '%00', '%FF', 'a'])
		).join('');

	/** the endpoints as a client means them, most of the time; the rest, odd paths */
	const paths = () =>
		rand() < 0.6
			? pick(['/ingest/v1', '/live', `/live/${runId}`])
			: pick([
					'/ingest/v1?x=%E0%A4%A',
					'/ingest/v1/',
					'/ingest/v2',
					'/ingest/v1%',
					'/live/',
					'/live?%',
					`/live/${runId.toUpperCase()}`,
					'/live/00000000-0000-0000-0000-000000000000',
					'/live/%E0%A4%A',
					`/live/${junkPercent()}`,
					'/live/a/b',
					'/live/..%2f..%2f',
					`/live/${'x'.repeat(3000)}`,
					'/',
					'/healthz',
					'/nowhere',
					'/@vite/client',
					'*',
					'//live',
					'http://evil.example/live/%E0',
					`/${junkPercent()}`,
					`/${latin1(bytes(8))}`
				]);
	const liveish = (p: string) => p.startsWith('/live');

	/** A request for `path`; `clean` leaves the handshake and the credentials right. */
	function request(path: string, clean: boolean): { bytes: Buffer; complete: boolean } {
		let method = 'GET';
		let headers: RawHeader[] = [
			['Host', `127.0.0.1:${app.port}`],
			['Upgrade', 'websocket'],
			['Connection', 'Upgrade'],
			['Sec-WebSocket-Version', '13'],
			['Sec-WebSocket-Key', wsKey()]
		];
		if (liveish(path)) headers.push(['Cookie', sessionCookie]);
		else headers.push(['Authorization', `Bearer ${pick(keys)}`]);
		let complete = true;
		const set = (name: string, value: string | null) => {
			headers = headers.filter(([k]) => k.toLowerCase() !== name.toLowerCase());
			if (value !== null) headers.push([name, value]);
		};
		const mutations = clean ? 0 : 1 + int(3);
		for (let i = 0; i < mutations; i++) {
			switch (int(12)) {
				case 0:
					set(
						'Sec-WebSocket-Key',
						pick([null, '', 'abc', '!!!!', 'x'.repeat(200), latin1(bytes(16))])
					);
					break;
				case 1:
					set('Sec-WebSocket-Version', pick([null, '', '8', '14', 'abc', '13, 8', '-1', '1e400']));
					break;
				case 2:
					set('Upgrade', pick([null, '', 'h2c', 'websocket, foo', 'WebSocket', latin1(bytes(6))]));
					break;
				case 3:
					set('Connection', pick([null, 'keep-alive', 'close', 'upgrade, upgrade']));
					break;
				case 4:
					set(
						'Authorization',
						pick([
							null,
							'',
							'Bearer',
							'Bearer ',
							'Basic Zm9vOmJhcg==',
							'Bearer skf_%E0%A4%A',
							`Bearer skf_${'x'.repeat(5000)}`,
							`Bearer skf_${latin1(bytes(24))}`,
							`Bearer ${pick(keys)} extra`,
							`bearer\t${pick(keys)}`
						])
					);
					break;
				case 5:
					set(
						'Cookie',
						pick([
							null,
							'skein_session=%E0%A4%A',
							'skein_session=',
							'skein_session',
							'=;;;=',
							'skein_session=a; skein_session=%',
							`skein_session="${latin1(bytes(12))}"`,
							`skein_session=${junkPercent()}`,
							`${sessionCookie}; ${sessionCookie}%`,
							`skein_session=${'y'.repeat(7000)}`
						])
					);
					break;
				case 6:
					set('Origin', pick(['null', 'http://evil.example', '%E0', ':::', latin1(bytes(10))]));
					break;
				case 7:
					set('Host', pick(['', '%E0%A4%A', 'evil.example', latin1(bytes(8))]));
					break;
				case 8:
					// over Node's 16 KiB header limit: answered 431 by the HTTP parser
					headers.push(['X-Pad', 'a'.repeat(8000 + int(20000))]);
					break;
				case 9:
					method = pick(['POST', 'HEAD', 'PUT', 'OPTIONS', 'BREW']);
					break;
				case 10:
					headers.push([
						pick(['Sec-WebSocket-Protocol', 'Sec-WebSocket-Extensions']),
						pick(['', ',,,', 'permessage-deflate; client_max_window_bits=abc', latin1(bytes(12))])
					]);
					break;
				default:
					// a broken header line: a request the parser may reject or wait on
					headers.push([pick(['X-Broken\r\nContinued', 'Bad Name', '']), latin1(bytes(4))]);
					complete = false;
			}
		}
		return { bytes: rawRequest(method, path, headers), complete };
	}

	const invalidUtf8 = [
		Buffer.from([0xe0, 0xa4, 0x41]),
		Buffer.from([0xff, 0xfe]),
		Buffer.from([0xc0, 0x80]),
		Buffer.concat([Buffer.from('{"type":"'), Buffer.from([0xed, 0xa0, 0x80]), Buffer.from('"}')])
	];
	const wrongJson = [
		'5',
		'null',
		'[]',
		'"open"',
		'{"type":5}',
		'{"type":"frame"}',
		'{"type":"open"}',
		'{"type":"open","run":null}',
		'{"type":"frame","seq":1e400,"t":"x"}',
		'{"type":"ping","c":"x"}',
		'{"type":"close"}',
		'{"__proto__":{"type":"open"}}',
		'['.repeat(5000),
		`{"type":"open","run":${JSON.stringify(run)}}`
	];
	const wrongPack = () =>
		pick([
			packr.pack('open'),
			packr.pack([1, 2, 3]),
			packr.pack({ type: 'open', run: 5 }),
			packr.pack({ type: 'frame', seq: -1, t: Number.NaN }),
			packr.pack({ type: 'ping', c: 1 }),
			Buffer.from([0xc1]),
			Buffer.from([0xdd, 0xff, 0xff, 0xff, 0xff]),
			Buffer.from([0xdf, 0xff, 0xff, 0xff, 0xff]),
			Buffer.from([0xc7, 0x05, 0x01]),
			Buffer.concat([Buffer.alloc(200, 0x91), Buffer.from([0xc0])])
		]);

	/** One to four frames a correct client would never send, sometimes after a proper first message. */
	function frames(path: string): Buffer[] {
		const out: Buffer[] = [];
		if (rand() < 0.3) {
			const first = liveish(path)
				? JSON.stringify({ type: 'ping', c: 1 })
				: JSON.stringify({ type: 'open', client_run_id: `fuzz-${int(4)}`, run });
			out.push(wsFrame({ opcode: 1, payload: Buffer.from(first) }));
		}
		const n = 1 + int(4);
		for (let i = 0; i < n; i++) {
			switch (int(11)) {
				case 0:
					out.push(wsFrame({ opcode: 2, payload: bytes(int(300)) }));
					break;
				case 1:
					out.push(wsFrame({ opcode: 1, payload: pick(invalidUtf8) }));
					break;
				case 2:
					out.push(wsFrame({ opcode: 1, payload: Buffer.from(pick(wrongJson)) }));
					break;
				case 3:
					out.push(wsFrame({ opcode: 2, payload: wrongPack() }));
					break;
				case 4:
					// oversize: over the live socket's 4 KiB and the ingest limit's cut-off (twice the limit)
					out.push(
						wsFrame({ opcode: pick([1, 2]), payload: bytes(2 * maxMessageBytes + int(5000)) })
					);
					break;
				case 5:
					// announces far more than it sends (up to 2^63 bytes)
					out.push(
						wsFrame({
							opcode: 2,
							payload: bytes(10),
							announce: pick([70_000n, 2n ** 40n, 2n ** 63n])
						})
					);
					break;
				case 6:
					out.push(wsFrame({ opcode: pick([0, 3, 7, 11, 15]), payload: bytes(int(20)) }));
					break;
				case 7:
					out.push(wsFrame({ opcode: pick([1, 2]), payload: bytes(8), rsv: 1 + int(7) }));
					break;
				case 8:
					out.push(wsFrame({ opcode: pick([1, 2]), payload: Buffer.from('{}'), mask: false }));
					break;
				case 9: {
					// close frames with impossible codes or reasons
					const code = Buffer.alloc(2);
					code.writeUInt16BE(pick([0, 999, 1005, 1006, 1015, 2999, 5000, 65535]));
					out.push(
						wsFrame({
							opcode: 8,
							payload: pick([Buffer.from([0x03]), code, Buffer.concat([code, pick(invalidUtf8)])])
						})
					);
					break;
				}
				default:
					// control frames that are fragmented or too long
					out.push(
						wsFrame({
							opcode: pick([9, 10]),
							fin: rand() < 0.5,
							payload: bytes(rand() < 0.5 ? 200 : 4)
						})
					);
			}
		}
		// sometimes only part of the last frame: the server must not wait on it forever (the test does not)
		if (rand() < 0.2) {
			const last = out.pop()!;
			out.push(last.subarray(0, 1 + int(last.length)));
		}
		return out;
	}

	return { paths, request, frames, garbage: () => bytes(1 + int(400)), chance: () => rand() };
}

interface Trouble {
	i: number;
	what: string;
}

async function one(
	i: number,
	f: ReturnType<typeof makeFuzzer>,
	trouble: Trouble[],
	tally: Map<string, number>
) {
	const roll = f.chance();
	if (roll < 0.05) {
		// bytes that are not HTTP at all: only the process's survival is checked
		await exchange(app.port, f.garbage(), 1500);
		return;
	}
	const path = f.paths();
	const req = f.request(path, roll < 0.45);
	if (roll > 0.9) {
		// the client resets the connection while its upgrade is being handled
		await slam(app.port, req.bytes, Math.floor(f.chance() * 20));
		return;
	}
	const answer: RawAnswer = await exchange(app.port, req.bytes, req.complete ? 5000 : 1500);
	const kind = path.startsWith('/ingest/v1')
		? 'ingest'
		: path.startsWith('/live')
			? 'live'
			: 'other';
	const label = `${kind} ${answer.status ?? 'none'}`;
	tally.set(label, (tally.get(label) ?? 0) + 1);
	if (req.complete && answer.status === null)
		trouble.push({
			i,
			what: `no answer to ${JSON.stringify(req.bytes.toString('latin1').slice(0, 300))}`
		});
	if (answer.status !== null && answer.status >= 500)
		trouble.push({
			i,
			what: `${answer.status} to ${JSON.stringify(req.bytes.toString('latin1').slice(0, 300))}: ${answer.rest.toString().slice(0, 200)}`
		});
	if (answer.status === 101) {
		for (const frame of f.frames(path)) answer.socket.write(frame);
		await readUntilClosed(answer.socket, answer.rest, 400);
	}
}

describe('socket endpoints under fuzzing', () => {
	it(`answer every malformed upgrade and message and stay up (seed ${seed})`, async () => {
		const f = makeFuzzer(seededRandom(seed));
		const trouble: Trouble[] = [];
		const tally = new Map<string, number>();
		const deadline = Date.now() + seconds * 1000;
		let sent = 0;
		while (sent < count && Date.now() < deadline && app.child.exitCode === null) {
			const batch = Array.from({ length: Math.min(parallel, count - sent) }, (_, k) => sent + k);
			// requests are drawn in order, so a seed replays the same sequence
			await Promise.all(batch.map((i) => one(i, f, trouble, tally)));
			sent += batch.length;
		}
		console.log('TALLY', sent, JSON.stringify(Object.fromEntries(tally)));
		const alive = app.child.exitCode === null && app.child.signalCode === null;
		expect(
			alive,
			`the app process died after ${sent} requests (seed ${seed}):\n${app.output().slice(-3000)}`
		).toBe(true);
		expect(trouble, `seed ${seed}; answers: ${JSON.stringify(Object.fromEntries(tally))}`).toEqual(
			[]
		);
		expect(sent).toBeGreaterThanOrEqual(Math.min(count, 100));

		const health = await fetch(`${app.url}/healthz`);
		expect(health.status).toBe(200);
		// the rig that streamed through it all still gets its frames acknowledged
		for (const end = bystanderSeq + 5; bystanderSeq < end; bystanderSeq++)
			bystander.send({ t: 1_790_000_000 + bystanderSeq, estimates: [], truth: [] });
		await bystander.flush();
		expect(await bystander.close()).toEqual({ run_id: runId, frames: bystanderSeq });
	}, 120_000);
});
