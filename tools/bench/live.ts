/**
 * `npm run bench:live` — device time to viewer, on loopback, against a durable database (fsync and
 * synchronous_commit on): 10 simulated rigs stream at 20 Hz in real time (GM-PHD over a simulated scenario,
 * through the rig client) while 5 viewers watch: 4 Node `ws` viewers, each following all 10 runs and stamping
 * the receipt of every frame, and 1 headless Debian chromium on the Run screen following one run, which
 * stamps each frame as it is put on the scene (window.__skeinLive). A Live board socket watches as well.
 * Device clock = this machine's clock, so latency = receipt (or on screen) − t. Target: p99 < 150 ms.
 * BENCH_SECONDS (default 20) sets the measured span; `-- --no-browser` leaves chromium out.
 */
import { resolve } from 'node:path';
import { chromium } from '@playwright/test';
import postgres from 'postgres';
import WebSocket from 'ws';
import { hashSecret, newSecret, secretPrefix } from '../../src/lib/server/auth/tokens';
import { applyMigrations } from '../../src/lib/server/db/migrate';
import { unpack } from '../../src/lib/msgpack';
import { percentile as pct } from '../../src/lib/percentile';
import type { LiveServerMessage } from '../../src/lib/protocol/live';
import { Browserish } from '../../tests/support/client';
import { startApp } from '../../tests/support/app';
import { buildIfStale } from '../lib/build';
import { clusterUrl, dropDatabase, ensureDatabase, startCluster, testCluster } from '../lib/pg';
import { SkeinRigClient } from '../../src/lib/protocol/client';
import {
	MEASUREMENT_FIELDS,
	STATE_FIELDS,
	getScenario,
	simulateFrom
} from '../../src/lib/tracking';
import { chromiumLaunchOptions } from '../lib/chromium';

const seconds = Number(process.env.BENCH_SECONDS ?? 20);
const warmupS = 3;
const RIGS = Number(process.env.BENCH_RIGS ?? 10);
const NODE_VIEWERS = 4;
const withBrowser = !process.argv.includes('--no-browser');
const root = resolve(import.meta.dirname, '../..');
const scenarios = ['lanternfall-crossing', 'glassmere-reach', 'brassnettle-yard'];
/** device t → handed to the rig client: how late the simulated rig itself is (simulation and this process's load) */
const sendLag: number[] = [];
let measuring = false;
const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

/**
 * A simulated rig whose device clock is this machine's: frame k carries t = t0 + k·dt and is sent at t0 + k·dt,
 * with t0 taken once the run is open (so connecting does not show up as latency).
 */
async function benchRig(
	url: string,
	key: string,
	scenario: string,
	seed: number,
	durationS: number,
	signal: AbortSignal
) {
	const sc = getScenario(scenario);
	const client = new SkeinRigClient({
		url,
		key,
		clientRunId: `bench-${seed}`,
		run: {
			name: `${sc.title} · bench ${seed}`,
			state_fields: [...STATE_FIELDS],
			measurement_fields: [...MEASUREMENT_FIELDS],
			tags: ['bench']
		}
	});
	await client.start();
	const t0 = Date.now();
	for (const step of simulateFrom(scenario, { seed, durationS, startEpoch: t0 / 1000 }, 0)) {
		if (signal.aborted) break;
		const wait = t0 + step.index * sc.dt * 1000 - Date.now();
		if (wait > 0) await sleep(wait);
		const { seq: _seq, ...frame } = step.frame;
		client.send(frame);
		if (measuring) sendLag.push(Date.now() - frame.t * 1000);
	}
	await client.close();
}

const row = (label: string, xs: number[]) =>
	`${label.padEnd(46)} n ${String(xs.length).padStart(6)}   p50 ${pct(xs, 50).toFixed(1).padStart(6)} ms   p95 ${pct(xs, 95).toFixed(1).padStart(6)} ms   p99 ${pct(xs, 99).toFixed(1).padStart(6)} ms   max ${Math.max(
		...xs
	)
		.toFixed(1)
		.padStart(6)} ms`;

async function main() {
	startCluster(testCluster);
	const dbUrl = new URL(clusterUrl(testCluster));
	dbUrl.pathname = '/skein_bench_live';
	await dropDatabase(dbUrl.toString());
	await ensureDatabase(dbUrl.toString()); // durable: no relaxed commit settings
	await applyMigrations(dbUrl.toString(), resolve(root, 'drizzle'));
	process.env.DATABASE_URL = dbUrl.toString();
	const { seedDemoPeople } = await import('../seed');
	const { closeDb } = await import('../../src/lib/server/db');
	await seedDemoPeople();
	await closeDb();

	const sql = postgres(dbUrl.toString(), { max: 2, onnotice: () => {} });
	const [{ fsync, sc }] = await sql<
		{ fsync: string; sc: string }[]
	>`select current_setting('fsync') as fsync, current_setting('synchronous_commit') as sc`;
	console.log(
		`database: fsync=${fsync}, synchronous_commit=${sc}; ${RIGS} rigs at 20 Hz, ${NODE_VIEWERS} Node viewers × ${RIGS} runs${withBrowser ? ' + 1 chromium Run screen' : ''}; ${seconds} s measured after ${warmupS} s`
	);

	buildIfStale();
	const app = await startApp({ DATABASE_URL: dbUrl.toString(), LOG_LEVEL: 'error' });
	const wsBase = app.url.replace('http', 'ws');
	const person = new Browserish(app.url);
	await person.signIn('admin@skein.test', 'skein-demo-admin');
	const session = person.cookies.get('skein_session');
	if (!session) throw new Error('could not sign in to the bench app');
	const cookie = `skein_session=${session}`;

	// rigs
	const stop = new AbortController();
	const rigIds: string[] = [];
	const rigs: Promise<unknown>[] = [];
	for (let i = 0; i < RIGS; i++) {
		const [rig] = await sql<
			{ id: string }[]
		>`insert into rigs (name) values (${`bench-rig-${i + 1}`}) returning id`;
		const secret = newSecret('skf');
		await sql`insert into feed_keys (rig_id, label, prefix, key_hash) values (${rig.id}, 'bench', ${secretPrefix(secret)}, ${hashSecret(secret)})`;
		rigIds.push(rig.id);
		rigs.push(
			benchRig(
				`${wsBase}/ingest/v1`,
				secret,
				scenarios[i % scenarios.length],
				100 + i,
				seconds + warmupS + 30,
				stop.signal
			)
		);
	}
	let runIds: string[] = [];
	for (let tries = 0; runIds.length < RIGS && tries < 100; tries++) {
		runIds = (
			await sql<
				{ id: string }[]
			>`select id from runs where rig_id = any(${rigIds}::uuid[]) and status = 'live' and frame_count > 0`
		).map((r) => r.id);
		if (runIds.length < RIGS) await sleep(100);
	}
	if (runIds.length < RIGS) throw new Error(`only ${runIds.length} of ${RIGS} runs came live`);

	// Node viewers: one socket per run each
	const nodeLatency: number[] = [];
	const commitLag: number[] = [];
	const commitToViewer: number[] = [];
	let skipped = 0;
	let frames = 0;
	const sockets: WebSocket[] = [];
	for (let v = 0; v < NODE_VIEWERS; v++) {
		for (const runId of runIds) {
			const ws = new WebSocket(`${wsBase}/live/${runId}`, {
				headers: { cookie },
				perMessageDeflate: false
			});
			ws.on('message', (data) => {
				const at = Date.now();
				const m = unpack(data as Buffer) as LiveServerMessage;
				if (m.type !== 'frame' || !measuring) return;
				frames++;
				skipped += m.skipped;
				nodeLatency.push(at - m.t * 1000);
				commitToViewer.push(at - m.committed_at);
				if (v === 0) commitLag.push(m.committed_at - m.t * 1000);
			});
			sockets.push(ws);
		}
	}
	let boardMessages = 0;
	const board = new WebSocket(`${wsBase}/live`, { headers: { cookie }, perMessageDeflate: false });
	board.on('message', () => measuring && boardMessages++);
	await Promise.all(
		[...sockets, board].map(
			(ws) => new Promise((r, j) => (ws.once('open', r), ws.once('error', j)))
		)
	);

	// the browser viewer
	const browser = withBrowser ? await chromium.launch(chromiumLaunchOptions) : null;
	const page = browser
		? await browser.newPage({ viewport: { width: 1280, height: 800 }, baseURL: app.url })
		: null;
	if (page) {
		await page.context().addCookies([{ name: 'skein_session', value: session, url: app.url }]);
		await page.goto(`/runs/${runIds[0]}?live`);
		await page
			.getByTestId('live-bar')
			.and(page.locator('[data-state="following"]'))
			.waitFor({ timeout: 30_000 });
	}

	await sleep(warmupS * 1000);
	if (page) await page.evaluate(() => window.__skeinLive && (window.__skeinLive.latencies = []));
	measuring = true;
	const started = Date.now();
	await sleep(seconds * 1000);
	measuring = false;
	const elapsed = (Date.now() - started) / 1000;
	const screen = page ? await page.evaluate(() => window.__skeinLive?.latencies ?? []) : [];
	const shown = page ? await page.evaluate(() => window.__skeinLive?.shown ?? 0) : 0;
	const stats = (await (await person.json('/api/live', 'GET')).json()) as {
		viewers: { pending: number; skipped: number }[];
	};

	console.log(
		`\nframes received by Node viewers: ${frames} in ${elapsed.toFixed(1)} s (${(frames / elapsed).toFixed(0)}/s; expected ≈ ${NODE_VIEWERS * RIGS * 20}/s), skipped by the server: ${skipped}`
	);
	console.log(
		`board summaries received: ${boardMessages} (${(boardMessages / elapsed).toFixed(1)}/s, at most 4/s)`
	);
	console.log(
		`viewers open at the end: ${stats.viewers.length}, max pending per viewer ${Math.max(...stats.viewers.map((v) => v.pending))}\n`
	);
	console.log(row('device t → sent by the simulated rig', sendLag));
	console.log(row('device t → committed at Skein', commitLag));
	console.log(row('committed → Node viewer receipt', commitToViewer));
	console.log(row('device t → Node viewer receipt', nodeLatency));
	if (page)
		console.log(
			row('device t → on the Run screen (chromium)', screen) + `   (${shown} frames shown)`
		);
	const worst = Math.max(pct(nodeLatency, 99), page ? pct(screen, 99) : 0);
	console.log(
		`\ntarget: p99 device time → screen < 150 ms: ${worst < 150 ? 'met' : 'NOT met'} (${worst.toFixed(1)} ms)`
	);

	stop.abort();
	for (const ws of sockets) ws.close();
	board.close();
	await browser?.close();
	await Promise.allSettled(rigs);
	await sql.end();
	await app.stop();
}

await main();
