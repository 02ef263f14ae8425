/**
 * Run screen benchmark, in Debian chromium (WebGL through SwiftShader) against the built app:
 *  (a) scene frame rate while playing at 1× a run with 300 estimates (with covariance ellipses), 600
 *      measurements and 5 s trails at 1280×800, beside the same page on a run with empty sets;
 *  (b) seek latency: a click on the timeline of a one-hour 20 Hz run (72,000 frames) until the new frame is
 *      drawn, p50/p95 over 25 clicks.
 * Frames are written straight into a bench database (batched inserts), not through the socket.
 * Run with `npm run bench:viewer`. Targets: ≥ 55 fps, p95 < 100 ms.
 * `-- --profile` also records a CPU profile of the main thread while the heavy scene plays and prints where the
 * time goes (self time per function and per script); `-- --reuse` keeps the bench database from the last run.
 */
import { resolve } from 'node:path';
import postgres from 'postgres';
import { chromium, type Page } from '@playwright/test';
import { profileSummary, startProfile } from './viewer-profile';
import { frameRow } from '../../src/lib/server/ingest/frame-rows';
import { defaultMetricSettings } from '../../src/lib/metrics/settings';
import { pack } from '../../src/lib/msgpack';
import { percentile as pct } from '../../src/lib/percentile';
import { seededRandom } from '../../src/lib/random';
import type { Frame } from '../../src/lib/protocol/types';
import { startApp } from '../../tests/support/app';
import { buildIfStale } from '../lib/build';
import { clusterUrl, dropDatabase, ensureDatabase, startCluster, testCluster } from '../lib/pg';
import { applyMigrations } from '../../src/lib/server/db/migrate';
import { chromiumLaunchOptions } from '../lib/chromium';

const root = resolve(import.meta.dirname, '..', '..');
const rand = seededRandom(4242);
const args = new Set(process.argv.slice(2));
const STATE = ['x', 'y', 'vx', 'vy'];

async function benchDatabase(reuse: boolean): Promise<string> {
	const base =
		process.env.SKEIN_TEST_DATABASE_URL ?? (startCluster(testCluster), clusterUrl(testCluster));
	const url = new URL(base);
	url.pathname = '/skein_bench_viewer';
	if (reuse) return url.toString();
	await dropDatabase(url.toString());
	await ensureDatabase(url.toString(), { relaxed: true });
	await applyMigrations(url.toString(), resolve(root, 'drizzle'));
	return url.toString();
}

/** A crowd of objects moving on straight lines, sampled at 20 Hz. */
function crowdFrame(
	k: number,
	t0: number,
	n: { est: number; meas: number; truth: number },
	objects: number[][]
): Frame {
	const t = t0 + k * 0.05;
	const pos = (o: number[]) => [o[0] + o[2] * k * 0.05, o[1] + o[3] * k * 0.05];
	const estimates = objects.slice(0, n.est).map((o, i) => {
		const [x, y] = pos(o);
		const sx = 0.3 + (i % 7) * 0.1;
		return {
			id: i,
			x: [x + 0.2, y - 0.1, o[2], o[3]],
			P: [sx, 0.05, 0, 0, 0.05, sx * 0.6, 0, 0, 0, 0, 0.4, 0, 0, 0, 0, 0.4],
			r: 0.3 + (0.7 * ((i * 37) % 100)) / 100
		};
	});
	const truth = objects
		.slice(0, n.truth)
		.map((o, i) => ({ id: `t${i}`, x: [...pos(o), o[2], o[3]] }));
	const measurements = Array.from({ length: n.meas }, (_, i) => {
		const o = objects[i % objects.length];
		const [x, y] = pos(o);
		return { z: [x + (rand() - 0.5) * 2, y + (rand() - 0.5) * 2] };
	});
	return { seq: k, t, ego: { x: k * 0.05 * 8, y: 0, heading: 0 }, estimates, truth, measurements };
}

async function insertRun(
	sql: postgres.Sql,
	rigId: string,
	name: string,
	count: number,
	make: (k: number, t0: number) => Frame
) {
	const t0 = Math.floor(Date.now() / 1000) - 7200;
	const [run] = await sql<{ id: string }[]>`
		insert into runs (rig_id, name, state_fields, measurement_fields, status, started_at, ended_at, first_t, last_t, next_seq, frame_count)
		values (${rigId}, ${name}, ${STATE}, ${['x', 'y']}, 'ended', to_timestamp(${t0}), to_timestamp(${t0 + count * 0.05}),
			${t0}, ${t0 + (count - 1) * 0.05}, ${count}, ${count}) returning id`;
	for (let d = t0 - 86400; d <= t0 + count * 0.05 + 86400; d += 43200)
		await sql`select skein_ensure_frames_partition(to_timestamp(${d}))`;
	const ctx = { stateFields: STATE, settings: defaultMetricSettings, coords: 'world' as const };
	for (let a = 0; a < count; a += 500) {
		const rows = [];
		for (let k = a; k < Math.min(count, a + 500); k++) {
			const f = make(k, t0);
			// the same row the ingest store writes
			const row = frameRow(
				run.id,
				{ seq: k, t: f.t, frame: f, raw: pack({ type: 'frame', ...f }) },
				ctx
			);
			rows.push({ ...row, zones: row.zones === null ? null : sql.json(row.zones) });
		}
		await sql`insert into frames ${sql(rows)}`;
	}
	return run.id;
}

interface Rate {
	/** animation frames a second the page kept up (the scene's ticker) */
	fps: number;
	/** scene redraws a second (a redraw happens only when the frame or the view changed) */
	draws: number;
	/** main-thread milliseconds per redraw: building the geometry and submitting it */
	msPerDraw: number;
}

async function fps(
	page: Page,
	runId: string,
	opts: { seconds?: number; speedUps?: number; profile?: boolean } = {}
): Promise<Rate> {
	await page.goto(`/runs/${runId}?t=5`);
	await page.waitForFunction(() => (window.__skeinScene?.seq ?? null) !== null, null, {
		timeout: 30_000
	});
	await page.waitForTimeout(1500);
	for (let k = 0; k < (opts.speedUps ?? 0); k++) await page.keyboard.press(']');
	await page.keyboard.press('Space');
	await page.waitForTimeout(1000);
	const profiler = opts.profile ? await startProfile(page) : null;
	const read = () =>
		page.evaluate(() => ({
			f: window.__skeinScene!.frames,
			d: window.__skeinScene!.draws,
			ms: window.__skeinScene!.drawMs,
			at: performance.now()
		}));
	const a = await read();
	await page.waitForTimeout((opts.seconds ?? 6) * 1000);
	const b = await read();
	if (profiler) console.log(profileSummary(await profiler.stop(), b.at - a.at));
	await page.keyboard.press('Space');
	const s = (b.at - a.at) / 1000;
	return {
		fps: (b.f - a.f) / s,
		draws: (b.d - a.d) / s,
		msPerDraw: (b.ms - a.ms) / Math.max(1, b.d - a.d)
	};
}

async function seeks(page: Page, runId: string, duration: number, clicks = 25): Promise<number[]> {
	await page.goto(`/runs/${runId}?t=10`);
	await page.waitForFunction(() => (window.__skeinScene?.seq ?? null) !== null, null, {
		timeout: 30_000
	});
	await page.waitForTimeout(1500);
	const track = page.getByTestId('timeline-track');
	const box = (await track.boundingBox())!;
	const out: number[] = [];
	for (let i = 0; i < clicks; i++) {
		const frac = 0.03 + ((i * 0.618) % 0.94);
		const x = box.x + frac * box.width;
		await page.evaluate(() => {
			window.addEventListener(
				'pointerdown',
				() => ((window as unknown as { __seekAt: number }).__seekAt = performance.now()),
				{ once: true, capture: true }
			);
		});
		await page.mouse.click(x, box.y + box.height / 2);
		const target = frac * duration;
		const ms = await page.waitForFunction(
			(target) => {
				const s = window.__skeinScene!;
				const at = (window as unknown as { __seekAt: number }).__seekAt;
				const first = Number(
					document.querySelector('[data-first-t]')?.getAttribute('data-first-t')
				);
				return s.t !== null && Math.abs(s.t - first - target) < 0.2 && s.drawnAt > at
					? s.drawnAt - at
					: false;
			},
			target,
			{ timeout: 15_000, polling: 'raf' }
		);
		out.push((await ms.jsonValue()) as number);
		await page.waitForTimeout(200);
	}
	return out;
}

const names = { heavy: 'crowd 300/600', empty: 'empty', long: 'one hour at 20 Hz' };
const reusable = args.has('--reuse') && (await benchRuns(await benchDatabase(true)));
const url = await benchDatabase(!!reusable);
process.env.DATABASE_URL = url;
buildIfStale();
const { heavy, empty, long } = reusable || (await writeRuns(url));

async function benchRuns(
	url: string
): Promise<{ heavy: string; empty: string; long: string } | null> {
	const sql = postgres(url, { max: 1, onnotice: () => {} });
	try {
		const rows = await sql<
			{ id: string; name: string }[]
		>`select id, name from runs where name in ${sql(Object.values(names))}`;
		const id = (name: string) => rows.find((r) => r.name === name)?.id;
		const [h, e, l] = [id(names.heavy), id(names.empty), id(names.long)];
		return h && e && l ? { heavy: h, empty: e, long: l } : null;
	} catch {
		return null;
	} finally {
		await sql.end();
	}
}

async function writeRuns(url: string) {
	const sql = postgres(url, { max: 2, onnotice: () => {} });
	const [rig] = await sql<
		{ id: string }[]
	>`insert into rigs (name) values ('bench-rig') returning id`;
	const objects = Array.from({ length: 600 }, () => [
		rand() * 300 - 150,
		rand() * 300 - 150,
		(rand() - 0.5) * 6,
		(rand() - 0.5) * 6
	]);
	console.log('writing runs…');
	const heavy = await insertRun(sql, rig.id, names.heavy, 600, (k, t0) =>
		crowdFrame(k, t0, { est: 300, meas: 600, truth: 30 }, objects)
	);
	const empty = await insertRun(sql, rig.id, names.empty, 600, (k, t0) => ({
		seq: k,
		t: t0 + k * 0.05,
		estimates: [],
		measurements: [],
		truth: []
	}));
	const started = Date.now();
	const long = await insertRun(sql, rig.id, names.long, 72_000, (k, t0) =>
		crowdFrame(k, t0, { est: 12, meas: 30, truth: 10 }, objects)
	);
	console.log(`72,000 frames written in ${((Date.now() - started) / 1000).toFixed(1)} s`);
	await sql.end();

	const { seedDemo } = await import('../seed');
	const { closeDb } = await import('../../src/lib/server/db');
	await seedDemo();
	await closeDb();
	return { heavy, empty, long };
}

const app = await startApp({ DATABASE_URL: url });
const browser = await chromium.launch(chromiumLaunchOptions);
try {
	const page = await browser.newPage({ viewport: { width: 1280, height: 800 }, baseURL: app.url });
	await page.goto('/sign-in');
	await page.getByLabel('E-mail').fill('admin@skein.test');
	await page.getByLabel('Password').fill('skein-demo-admin');
	await page.getByRole('button', { name: 'Sign in' }).click();
	await page.getByTestId('whoami').waitFor();

	const fEmpty = await fps(page, empty);
	const fHeavy = await fps(page, heavy, { profile: args.has('--profile') });
	// at 4× a 20 Hz run brings a new frame on every animation frame: a redraw every time
	const fHeavy4 = await fps(page, heavy, { speedUps: 2 });
	const s = await seeks(page, long, 3599.95);
	const line = (r: Rate) =>
		`${r.fps.toFixed(1)} fps (${r.draws.toFixed(0)} redraws/s, ${r.msPerDraw.toFixed(1)} ms main thread each)`;
	console.log('\nRun screen benchmark (Debian chromium, SwiftShader WebGL, 1280×800)');
	console.log(`  (a) playing at 1×, empty scene:                         ${line(fEmpty)}`);
	console.log(
		`  (a) playing at 1×, 300 estimates + ellipses, 600 meas., 5 s trails: ${line(fHeavy)}  (target ≥ 55)`
	);
	console.log(`  (a) the same at 4×, a new frame on every tick:          ${line(fHeavy4)}`);
	console.log(
		`  (b) seek on a 72,000-frame run, click → new frame drawn: p50 ${pct(s, 50).toFixed(0)} ms, p95 ${pct(s, 95).toFixed(0)} ms, max ${Math.max(...s).toFixed(0)} ms  (target p95 < 100)`
	);
} finally {
	await browser.close();
	await app.stop();
}
