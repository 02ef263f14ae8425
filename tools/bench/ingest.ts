/**
 * `npm run bench:ingest` — ingest throughput and ack latency on loopback, against a durable database
 * (fsync and synchronous_commit on), and in the same run the rate of a raw COPY of the same encoded rows
 * into the same table. Frames: 40 2-D measurements, 20 4-D estimates with 4×4 P and r, 20 truth objects.
 *
 * `npm run bench:heavy` (this file with the argument `heavy`) — isolation: four ordinary rigs at 50 Hz, alone
 * and then beside a rig sending frames whose GOSPA is expensive (all objects within the cut-off of each
 * other), in the same run: the ordinary rigs' ack latency with and without the heavy rig.
 */
import { pack, unpack } from '../../src/lib/msgpack';
import { percentile as pct } from '../../src/lib/percentile';
import { seededRandom as rng } from '../../src/lib/random';
import { performance } from 'node:perf_hooks';
import { readFileSync } from 'node:fs';
import { resolve } from 'node:path';
import postgres from 'postgres';
import WebSocket from 'ws';
import { frameMetrics, defaultMetricSettings } from '../../src/lib/metrics';
import { hashSecret, newSecret, secretPrefix } from '../../src/lib/server/auth/tokens';
import { applyMigrations } from '../../src/lib/server/db/migrate';
import type { Frame } from '../../src/lib/protocol/types';
import { startApp } from '../../tests/support/app';
import { buildIfStale } from '../lib/build';
import { clusterUrl, dropDatabase, ensureDatabase, startCluster, testCluster } from '../lib/pg';
import {
	copyHeader,
	copyTrailer,
	frameCopyColumns,
	frameTuple,
	uuidBytes
} from '../../src/lib/server/ingest/copy-binary';
import { frameRow } from '../../src/lib/server/ingest/frame-rows';

/** The shared MessagePack encoding as a Buffer view (no copy), for Buffer.concat and hex. */
const packBuffer = (value: unknown): Buffer => {
	const bytes = pack(value);
	return Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength);
};

const seconds = Number(process.env.BENCH_SECONDS ?? 8);
const root = resolve(import.meta.dirname, '../..');
const stateFields = ['x', 'y', 'vx', 'vy'];
const benchRunId = '00000000-0000-4000-8000-00000000b00c';
const rowCtx = { stateFields, settings: defaultMetricSettings, coords: 'world' as const };

function benchFrame(seq: number, t: number, r: () => number): Frame & { type: 'frame' } {
	const est = Array.from({ length: 20 }, (_, i) => {
		const a = 0.5 + r();
		const b = 0.5 + r();
		const c = 0.1 * r();
		return {
			id: i,
			x: [r() * 80 - 40, r() * 80 - 40, r() * 10 - 5, r() * 10 - 5],
			P: [a, c, 0, 0, c, b, 0, 0, 0, 0, 0.3 + r(), 0, 0, 0, 0, 0.3 + r()],
			r: r()
		};
	});
	return {
		type: 'frame',
		seq,
		t,
		ego: { x: r() * 10, y: r() * 10, heading: r() },
		measurements: Array.from({ length: 40 }, () => ({ z: [r() * 80 - 40, r() * 80 - 40] })),
		estimates: est,
		truth: est.map((e, i) => ({
			id: `t${i}`,
			x: [e.x[0] + r() - 0.5, e.x[1] + r() - 0.5, e.x[2], e.x[3]]
		}))
	};
}

interface RigResult {
	frames: number;
	latencies: number[];
}

/** A bench rig on a raw socket: pre-encoded frames, window-limited, latency from send to covering ack. */
async function benchRig(
	url: string,
	key: string,
	id: string,
	opts: { untilMs: number; rateHz?: number; templates: Buffer[]; t0: number }
): Promise<RigResult> {
	const ws = new WebSocket(url, {
		headers: { authorization: `Bearer ${key}` },
		perMessageDeflate: false
	});
	await new Promise((res, rej) => (ws.once('open', res), ws.once('error', rej)));
	const inbox: ((m: Record<string, unknown>) => void)[] = [];
	let window = 64;
	let acked = -1;
	const sentAt: number[] = [];
	const latencies: number[] = [];
	let wake: (() => void) | null = null;
	ws.on('message', (d) => {
		const m = unpack(d as Buffer) as Record<string, unknown>;
		if (m.type === 'ack') {
			const now = performance.now();
			for (let s = acked + 1; s <= (m.seq as number); s++) latencies.push(now - sentAt[s]);
			acked = m.seq as number;
			wake?.();
		} else if (m.type === 'error') {
			console.error('server error', m);
		} else inbox.shift()?.(m);
	});
	const opened = await new Promise<Record<string, unknown>>((res) => {
		inbox.push(res);
		ws.send(
			packBuffer({
				type: 'open',
				client_run_id: id,
				run: { name: id, state_fields: stateFields, measurement_fields: ['x', 'y'] }
			})
		);
	});
	window = opened.window as number;
	const started = performance.now();
	let seq = 0;
	const dt = opts.rateHz ? 1000 / opts.rateHz : 0;
	while (performance.now() < opts.untilMs) {
		if (seq - acked > window) {
			await new Promise<void>((r) => (wake = r));
			continue;
		}
		if (dt) {
			const due = started + seq * dt;
			const wait = due - performance.now();
			if (wait > 0) await new Promise((r) => setTimeout(r, wait));
		}
		// patch seq and t into a pre-encoded template: re-encoding per frame would bench the client, not the server
		const msg = Buffer.from(opts.templates[seq % opts.templates.length]);
		msg.writeUInt32BE(seq, seqOffset);
		msg.writeDoubleBE(opts.t0 + seq * 0.05, tOffset);
		sentAt[seq] = performance.now();
		ws.send(msg);
		seq++;
		if (seq % 32 === 0) await new Promise((r) => setImmediate(r));
	}
	while (acked < seq - 1) await new Promise<void>((r) => (wake = r));
	ws.send(packBuffer({ type: 'close' }));
	await new Promise((r) => ws.once('close', r));
	return { frames: seq, latencies };
}

/**
 * A frame message whose seq (uint32) and t (float64) sit at fixed offsets, so the bench rig can patch them in
 * place. MessagePack allows these wider-than-needed encodings; every decoder reads them.
 */
const head = Buffer.concat([
	Buffer.from([0x87]),
	packBuffer('type'),
	packBuffer('frame'),
	packBuffer('seq'),
	Buffer.from([0xce, 0, 0, 0, 0])
]);
const seqOffset = head.length - 4;
const tKey = packBuffer('t');
const tOffset = head.length + tKey.length + 1;

function template(f: ReturnType<typeof benchFrame>): Buffer {
	const parts: Buffer[] = [head, tKey, Buffer.from([0xcb, 0, 0, 0, 0, 0, 0, 0, 0])];
	for (const k of ['ego', 'measurements', 'estimates', 'truth'] as const)
		parts.push(packBuffer(k), packBuffer(f[k]));
	return Buffer.concat(parts);
}

/**
 * k truth objects and k estimates (4-D x, float64) within a few metres of each other: one k × k GOSPA group
 * under the default cut-off (10 m). k = 5,000 is the frame of issue 11 (5,000 and 5,000 within the cut-off);
 * k = 500 is the largest such frame the pairs limit accepts.
 */
function heavyFrame(k: number, r: () => number): ReturnType<typeof benchFrame> {
	const truth = Array.from({ length: k }, (_, i) => ({
		id: i,
		x: [r() * 5, r() * 5, r(), r()]
	}));
	return {
		type: 'frame',
		seq: 0,
		t: 0,
		ego: { x: 0, y: 0, heading: 0 },
		measurements: [],
		estimates: truth.map((o) => ({ id: o.id, x: [o.x[0] + r(), o.x[1] + r(), o.x[2], o.x[3]] })),
		truth
	};
}

/**
 * The heavy rig: one pre-encoded frame every `everyMs` until `untilMs`, acks and errors counted, then the
 * socket is dropped without waiting for what is still in work (the run stays live in its grace period).
 */
async function heavyRig(
	url: string,
	key: string,
	id: string,
	opts: { untilMs: number; everyMs: number; template: Buffer; t0: number }
): Promise<{ sent: number; acked: number; errors: Set<string> }> {
	const ws = new WebSocket(url, {
		headers: { authorization: `Bearer ${key}` },
		perMessageDeflate: false
	});
	await new Promise((res, rej) => (ws.once('open', res), ws.once('error', rej)));
	let acked = -1;
	const errors = new Set<string>();
	let opened: (() => void) | null = null;
	ws.on('message', (d) => {
		const m = unpack(d as Buffer) as Record<string, unknown>;
		if (m.type === 'opened') opened?.();
		else if (m.type === 'ack') acked = m.seq as number;
		else if (m.type === 'error') errors.add(`${m.code}: ${String(m.message)}`);
	});
	await new Promise<void>((res) => {
		opened = res;
		ws.send(
			pack({
				type: 'open',
				client_run_id: id,
				run: { name: id, state_fields: stateFields, measurement_fields: ['x', 'y'] }
			})
		);
	});
	let seq = 0;
	while (performance.now() < opts.untilMs) {
		const msg = Buffer.from(opts.template);
		msg.writeUInt32BE(seq, seqOffset);
		msg.writeDoubleBE(opts.t0 + seq * 0.05, tOffset);
		ws.send(msg);
		seq++;
		await new Promise((r) => setTimeout(r, opts.everyMs));
	}
	ws.terminate();
	return { sent: seq, acked: acked + 1, errors };
}

/** Peak resident memory of a process, from /proc (Linux), in MB. */
function peakRssMb(pid: number | undefined): string {
	try {
		const status = readFileSync(`/proc/${pid}/status`, 'utf8');
		const kb = Number(/VmHWM:\s+(\d+)/.exec(status)?.[1]);
		return `${(kb / 1024).toFixed(0)} MB`;
	} catch {
		return 'unknown';
	}
}

async function heavyMain(dbUrl: string, keys: string[], templates: Buffer[]) {
	const rate = 50;
	console.log(
		`\nfour ordinary rigs at ${rate} Hz each (the frame above), alone and beside a heavy rig, ${seconds} s each; ack latency of the ordinary rigs only`
	);
	const r = rng(7);
	const variants = [
		{ k: 5000, everyMs: 4000, what: '5,000 truth × 5,000 estimates within c, every 4 s' },
		{ k: 500, everyMs: 250, what: '500 × 500 within c (largest the pairs limit accepts), 4 Hz' }
	];
	let runIx = 0;
	// BENCH_HEAVY=500 (or 5000) runs that variant alone
	const only = process.env.BENCH_HEAVY ? Number(process.env.BENCH_HEAVY) : null;
	for (const v of variants.filter((x) => only === null || x.k === only)) {
		const heavyTemplate = template(heavyFrame(v.k, r));
		const app = await startApp({ DATABASE_URL: dbUrl, LOG_LEVEL: 'warn' });
		const wsUrl = app.url.replace('http', 'ws') + '/ingest/v1';
		console.log(
			`\nheavy frame: ${v.what}; ${(heavyTemplate.length / 1024).toFixed(0)} KB MessagePack`
		);
		// the app's first frames also wait for its row worker to start: not what is measured here
		await benchRig(wsUrl, keys[5], `warm-up-${runIx}`, {
			untilMs: performance.now() + 2000,
			rateHz: rate,
			templates,
			t0: Date.UTC(2026, 11, 2) / 1000 + runIx * 3600
		});
		for (const withHeavy of [false, true]) {
			const untilMs = performance.now() + seconds * 1000;
			const t0 = Date.UTC(2026, 11, 1) / 1000 + runIx * 3600;
			const heavy = withHeavy
				? heavyRig(wsUrl, keys[4], `heavy-${runIx}`, {
						untilMs,
						everyMs: v.everyMs,
						template: heavyTemplate,
						t0
					})
				: null;
			const out = await Promise.all(
				Array.from({ length: 4 }, (_, i) =>
					benchRig(wsUrl, keys[i], `ordinary-${runIx}-${i}`, {
						untilMs,
						rateHz: rate,
						templates,
						t0
					})
				)
			);
			runIx++;
			const lat = out.flatMap((o) => o.latencies);
			const h = heavy ? await heavy : null;
			console.log(
				`  ${(withHeavy ? 'beside the heavy rig' : 'alone').padEnd(22)} ack p50 ${pct(lat, 50).toFixed(1).padStart(7)} ms   p99 ${pct(lat, 99).toFixed(1).padStart(8)} ms   max ${Math.max(
					...lat
				)
					.toFixed(1)
					.padStart(8)} ms   (${lat.length} frames)`
			);
			if (h) {
				console.log(
					`  heavy rig: ${h.sent} frames sent, ${h.acked} acknowledged before it left${h.errors.size ? `; errors: ${[...h.errors].join('; ')}` : ''}`
				);
			}
		}
		console.log(`  app peak memory (VmHWM) ${peakRssMb(app.child.pid)}`);
		const moved = app.output().match(/computing them in the heavy lane/g)?.length ?? 0;
		console.log(`  runs moved to the heavy lane by their measured time: ${moved}`);
		await app.stop();
	}
}

async function main() {
	const base = startCluster(testCluster);
	const dbUrl = new URL(clusterUrl(testCluster));
	dbUrl.pathname = '/skein_bench';
	void base;
	await dropDatabase(dbUrl.toString());
	await ensureDatabase(dbUrl.toString()); // durable: no relaxed commit settings
	await applyMigrations(dbUrl.toString(), resolve(root, 'drizzle'));
	const sql = postgres(dbUrl.toString(), { max: 4, onnotice: () => {} });
	const [{ fsync, sc }] = await sql<
		{ fsync: string; sc: string }[]
	>`select current_setting('fsync') as fsync, current_setting('synchronous_commit') as sc`;
	console.log(`database: fsync=${fsync}, synchronous_commit=${sc}; ${seconds} s per configuration`);

	buildIfStale();
	const r = rng(1);
	const templates = Array.from({ length: 64 }, (_, i) => template(benchFrame(i, 0, r)));
	const check = unpack(templates[0]) as Frame;
	if (Object.keys(check).length !== 7 || !Array.isArray(check.estimates))
		throw new Error('bad template');
	console.log(`frame message: ${templates[0].length} bytes MessagePack`);

	const keys: string[] = [];
	for (let i = 0; i < 16; i++) {
		const [rig] = await sql<
			{ id: string }[]
		>`insert into rigs (name) values (${'bench-' + i}) returning id`;
		const secret = newSecret('skf');
		await sql`insert into feed_keys (rig_id, prefix, key_hash) values (${rig.id}, ${secretPrefix(secret)}, ${hashSecret(secret)})`;
		keys.push(secret);
	}
	if (process.argv[2] === 'heavy') {
		await heavyMain(dbUrl.toString(), keys, templates);
		await sql.end();
		return;
	}

	const app = await startApp(
		{ DATABASE_URL: dbUrl.toString(), LOG_LEVEL: 'error' },
		process.env.BENCH_PROFILE ? ['--cpu-prof', `--cpu-prof-dir=${process.env.BENCH_PROFILE}`] : []
	);
	let wsUrl = app.url.replace('http', 'ws') + '/ingest/v1';

	const results: { label: string; fps: number; p50: number; p99: number }[] = [];
	let runIx = 0;
	async function config(label: string, rigs: number, rateHz?: number) {
		// every measurement starts from a clean checkpoint, not in the middle of one the previous run caused
		await sql`checkpoint`;
		const untilMs = performance.now() + seconds * 1000;
		const started = performance.now();
		const t0 = Date.UTC(2026, 10, 30) / 1000 + runIx * 3600;
		const out = await Promise.all(
			Array.from({ length: rigs }, (_, i) =>
				benchRig(wsUrl, keys[i], `bench-${runIx}-${i}`, { untilMs, rateHz, templates, t0 })
			)
		);
		runIx++;
		const elapsed = (performance.now() - started) / 1000;
		const frames = out.reduce((a, b) => a + b.frames, 0);
		const lat = out.flatMap((o) => o.latencies);
		const row = { label, fps: frames / elapsed, p50: pct(lat, 50), p99: pct(lat, 99) };
		results.push(row);
		console.log(
			`${label.padEnd(34)} ${row.fps.toFixed(0).padStart(7)} frames/s   ack p50 ${row.p50.toFixed(1).padStart(6)} ms   p99 ${row.p99.toFixed(1).padStart(6)} ms`
		);
		return row;
	}

	console.log('\nthrough the WebSocket (validation, metrics, batching, commit, ack):');
	await config('1 rig, as fast as acks allow', 1);
	const four = await config('4 rigs, as fast as acks allow', 4);
	await config('16 rigs, as fast as acks allow', 16);
	await config('4 rigs × 250 Hz = 1,000 frames/s', 4, 250);
	await app.stop();

	// what the per-frame metric columns cost: the same, rows stored with set sizes only
	const bare = await startApp({
		DATABASE_URL: dbUrl.toString(),
		LOG_LEVEL: 'error',
		INGEST_METRIC_COLUMNS: 'off'
	});
	wsUrl = bare.url.replace('http', 'ws') + '/ingest/v1';
	console.log(
		'\nthe same without the metric columns (INGEST_METRIC_COLUMNS=off, a measurement switch):'
	);
	const fourBare = await config('4 rigs, as fast as acks allow', 4);
	await bare.stop();

	// the same rows the store writes (metrics included), COPY'd straight into the same table
	console.log(
		'\nraw COPY of the same rows, one COPY in one transaction (the ceiling for this table here):'
	);
	const n = 20_000;
	const t0 = Date.UTC(2026, 10, 29) / 1000;
	const lines: string[] = [];
	const tuples: Buffer[] = [];
	const runBytes = uuidBytes(benchRunId);
	let metricsMs = 0;
	for (let i = 0; i < n; i++) {
		const f = benchFrame(i, t0 + i * 0.05, r);
		const m0 = performance.now();
		const m = frameMetrics(f, { stateFields, settings: defaultMetricSettings });
		metricsMs += performance.now() - m0;
		const raw = packBuffer(f);
		// binary: the very tuple the ingest store writes for this frame
		tuples.push(
			frameTuple(runBytes, frameRow(benchRunId, { seq: i, t: f.t, raw, frame: f }, rowCtx))
		);
		const z = Object.keys(m.zones).length ? JSON.stringify(m.zones) : '\\N';
		const v = (x: number | null) => (x === null ? '\\N' : String(x));
		lines.push(
			[
				benchRunId,
				i,
				f.t,
				new Date(f.t * 1000).toISOString(),
				`\\\\x${raw.toString('hex')}`,
				v(m.n_measurements),
				v(m.n_estimates),
				v(m.n_truth),
				v(m.expected_cardinality),
				v(m.gospa),
				v(m.gospa_localization),
				v(m.gospa_missed),
				v(m.gospa_false),
				v(m.ospa),
				v(m.nees_mean),
				z
			].join('\t') + '\n'
		);
	}
	const metricsUs = (metricsMs * 1000) / n;
	await sql`select skein_ensure_frames_partition(${new Date(t0 * 1000)}::timestamptz)`;
	const cols =
		'run_id, seq, t, ts, data, n_measurements, n_estimates, n_truth, expected_cardinality, gospa, gospa_localization, gospa_missed, gospa_false, ospa, nees_mean, zones';

	async function copyChunks(statement: string, chunks: (string | Buffer)[]): Promise<number> {
		await sql`checkpoint`;
		const started = performance.now();
		const stream = await sql.unsafe(statement).writable();
		for (const chunk of chunks) {
			if (!stream.write(chunk)) await new Promise((res) => stream.once('drain', res));
		}
		await new Promise<void>((res, rej) =>
			stream.end((err?: Error | null) => (err ? rej(err) : res()))
		);
		return n / ((performance.now() - started) / 1000);
	}

	/** Text COPY, the hex of the packed sets built in 500-row chunks as it goes. */
	async function copyInto(table: string): Promise<number> {
		const chunks: string[] = [];
		for (let i = 0; i < lines.length; i += 500) chunks.push(lines.slice(i, i + 500).join(''));
		return copyChunks(`copy ${table} (${cols}) from stdin`, chunks);
	}

	async function copyBinaryInto(table: string): Promise<number> {
		const chunks: Buffer[] = [copyHeader()];
		for (let i = 0; i < tuples.length; i += 500)
			chunks.push(Buffer.concat(tuples.slice(i, i + 500)));
		chunks.push(copyTrailer());
		return copyChunks(`copy ${table} (${frameCopyColumns}) from stdin (format binary)`, chunks);
	}

	await sql`delete from frames where run_id = ${benchRunId}`;
	const binaryRate = await copyBinaryInto('frames');
	console.log(
		`${'binary COPY into frames (as the store writes)'.padEnd(44)} ${binaryRate.toFixed(0).padStart(7)} rows/s`
	);
	await sql`delete from frames where run_id = ${benchRunId}`;
	const textRate = await copyInto('frames');
	console.log(
		`${'text COPY into frames (hex bytea)'.padEnd(44)} ${textRate.toFixed(0).padStart(7)} rows/s`
	);
	const copyRate = Math.max(binaryRate, textRate);
	console.log('storage of the packed sets (text COPY into a copy of the table):');
	const variants: [string, string][] = [
		['uncompressed (EXTERNAL)', 'alter table bench_v alter column data set storage external'],
		[
			'pglz (PostgreSQL default)',
			'alter table bench_v alter column data set storage extended, alter column data set compression pglz'
		],
		[
			'lz4',
			'alter table bench_v alter column data set storage extended, alter column data set compression lz4'
		]
	];
	for (const [label, alter] of variants) {
		await sql`drop table if exists bench_v`;
		await sql`create table bench_v (like frames including defaults)`;
		await sql.unsafe(alter);
		const rate = await copyInto('bench_v');
		const [{ size }] = await sql<
			{ size: string }[]
		>`select pg_size_pretty(pg_total_relation_size('bench_v')) as size`;
		console.log(
			`  ${('storage: ' + label).padEnd(42)} ${rate.toFixed(0).padStart(7)} rows/s   ${size} for ${n} frames`
		);
	}
	await sql`drop table if exists bench_v`;
	console.log(
		`\nper-frame metrics at ingest (GOSPA, OSPA, cardinality, NEES, zone) for this frame shape: ${metricsUs.toFixed(0)} µs/frame`
	);
	console.log(
		`\nratio, 4 rigs through the socket / the faster raw COPY: ${(four.fps / copyRate).toFixed(2)} (target ≥ 0.6)`
	);
	console.log(
		`ratio without the metric columns: ${(fourBare.fps / copyRate).toFixed(2)}; the metric columns cost ${((1 - four.fps / fourBare.fps) * 100).toFixed(0)} % of the 4-rig rate`
	);
	console.log(`targets: ≥ 5,000 frames/s with 4 rigs; p99 ack latency < 100 ms at 1,000 frames/s`);
	await sql.end();
}

await main();
process.exit(0);
