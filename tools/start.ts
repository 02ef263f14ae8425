/**
 * `npm start`: PostgreSQL, migrations, demo people, build when stale, the app (with its mail catcher) on PORT,
 * then the demo's recorded runs and one rig streaming live (SKEIN_DEMO_LIVE=off turns that off).
 * Prints the URL and the demo sign-in.
 */
import { spawn } from 'node:child_process';
import { existsSync, readFileSync, writeFileSync } from 'node:fs';
import { resolve } from 'node:path';
import { closeDb } from '../src/lib/server/db';
import { applyMigrations } from '../src/lib/server/db/migrate';
import { resolveFeedKey } from '../src/lib/server/rigs';
import { buildIfStale } from './lib/build';
import { demoCluster, ensureDatabase, startCluster } from './lib/pg';
import { demoAdmin, demoKey, liveDemo, seedDemoPeople, seedDemoRuns } from './seed';
import { runSimulatedRig } from './sim/rig';

const root = resolve(import.meta.dirname, '..');

/** The live demo rig keeps one feed key across restarts (kept, like the cluster, in the git-ignored .data/). */
async function liveDemoKey(): Promise<string> {
	const file = resolve(root, '.data', 'demo-live.key');
	const kept = existsSync(file) ? readFileSync(file, 'utf8').trim() : '';
	if (kept && (await resolveFeedKey(kept)).ok) return kept;
	const key = await demoKey(liveDemo.rig, 'live demo');
	writeFileSync(file, key + '\n', { mode: 0o600 });
	return key;
}
const port = Number(process.env.PORT ?? 3000);
const log = (line: string) => process.stdout.write(`[demo] ${line}\n`);

const url = process.env.DATABASE_URL ?? startCluster(demoCluster);
process.env.DATABASE_URL = url;
await ensureDatabase(url);
await applyMigrations(url, resolve(root, 'drizzle'));
await seedDemoPeople();
buildIfStale();

const app = spawn(process.execPath, ['--import', 'tsx', resolve(root, 'server-ws/server.ts')], {
	cwd: root,
	stdio: ['ignore', 'inherit', 'inherit'],
	env: {
		...process.env,
		PORT: String(port),
		NODE_ENV: 'production',
		MAIL_CATCHER_PORT: process.env.MAIL_CATCHER_PORT ?? '2525'
	}
});
const stopping = new AbortController();
for (const sig of ['SIGINT', 'SIGTERM'] as const) {
	process.on(sig, () => {
		stopping.abort();
		app.kill(sig);
	});
}
app.on('exit', (code, signal) => {
	const asked = stopping.signal.aborted;
	stopping.abort();
	const how = signal ? `by signal ${signal}` : `with exit code ${code}`;
	if (asked) console.log(`\n  Skein stopped (${how}).\n`);
	else
		console.error(
			`\n  Skein has stopped (${how}): the demo is no longer served at http://127.0.0.1:${port}.\n` +
				'  Its last log lines are above. Start it again with npm start; in production a supervisor restarts\n' +
				'  it (docs/deploy.md).\n'
		);
	void closeDb().finally(() => process.exit(asked ? 0 : code || 1));
});

const base = `http://127.0.0.1:${port}`;
for (let i = 0; ; i++) {
	try {
		if ((await fetch(`${base}/healthz`)).ok) break;
	} catch {
		/* not up yet */
	}
	if (i > 300) throw new Error('the app did not come up within a minute');
	await new Promise((r) => setTimeout(r, 200));
}

const ingestUrl = `ws://127.0.0.1:${port}/ingest/v1`;
await seedDemoRuns(ingestUrl, log);
console.log(
	`\n  Skein is up: ${base}\n  Demo sign-in: ${demoAdmin.email} / ${demoAdmin.password}\n  Stop with Ctrl-C (PostgreSQL keeps running; npm run db:stop stops it).\n`
);

if (process.env.SKEIN_DEMO_LIVE !== 'off') {
	const key = await liveDemoKey();
	log(
		`${liveDemo.rig} is streaming live (${liveDemo.scenario}); SKEIN_DEMO_LIVE=off turns this off`
	);
	for (let seed = Math.floor(Date.now() / 1000) % 100_000; !stopping.signal.aborted; seed++) {
		try {
			await runSimulatedRig({
				url: ingestUrl,
				key,
				scenario: liveDemo.scenario,
				seed,
				speed: 1,
				signal: stopping.signal,
				tags: ['live', 'demo']
			});
		} catch (err) {
			if (stopping.signal.aborted) break;
			log(
				`live rig stopped: ${err instanceof Error ? err.message : String(err)}; restarting in 5 s`
			);
			await new Promise((r) => setTimeout(r, 5000));
		}
	}
}
