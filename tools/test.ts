/**
 * `npm test`: the whole suite on a fresh test database — type checks, unit and integration tests (Vitest,
 * real PostgreSQL, real sockets) and end-to-end tests (Playwright in Debian's chromium). Ends with one line
 * "N passed, N failed, N skipped" and a non-zero exit on any failure.
 */
import { execFileSync, spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, readFileSync } from 'node:fs';
import { resolve } from 'node:path';
import { applyMigrations } from '../src/lib/server/db/migrate';
import { buildIfStale } from './lib/build';
import { clusterUrl, dropDatabase, ensureDatabase, startCluster, testCluster } from './lib/pg';

const root = resolve(import.meta.dirname, '..');
const out = resolve(root, 'test-results');
mkdirSync(out, { recursive: true });
const only = process.argv.slice(2);
const want = (part: string) => only.length === 0 || only.includes(part);

const totals = { passed: 0, failed: 0, skipped: 0 };
let hardFailure = false;

function step(name: string) {
	process.stdout.write(`\n== ${name}\n`);
}

function ensureChromium() {
	if (existsSync('/usr/bin/chromium')) return;
	step('installing Debian chromium for the end-to-end tests');
	execFileSync('apt-get', ['update'], { stdio: 'inherit' });
	execFileSync('apt-get', ['install', '-y', '--no-install-recommends', 'chromium'], {
		stdio: 'inherit',
		env: { ...process.env, DEBIAN_FRONTEND: 'noninteractive' }
	});
}

async function freshDatabase(name: string): Promise<string> {
	const base =
		process.env.SKEIN_TEST_DATABASE_URL ?? (startCluster(testCluster), clusterUrl(testCluster));
	const url = new URL(base);
	url.pathname = `/${name}`;
	await dropDatabase(url.toString());
	await ensureDatabase(url.toString(), { relaxed: true });
	await applyMigrations(url.toString(), resolve(root, 'drizzle'));
	return url.toString();
}

const env = { ...process.env, NODE_ENV: 'test', VITE_CONFIG_NATIVE_IGNORE_WARNING: 'true' };

if (want('check')) {
	for (const [name, cmd] of [
		[
			'svelte-check',
			[
				'npx',
				'svelte-kit',
				'sync',
				'&&',
				'npx',
				'svelte-check',
				'--tsconfig',
				'./tsconfig.json',
				'--output',
				'human'
			]
		],
		['eslint', ['npx', 'eslint', '.']],
		['prettier', ['npx', 'prettier', '--check', '.']]
	] as const) {
		step(name);
		const r = spawnSync(cmd.join(' '), { cwd: root, stdio: 'inherit', env, shell: true });
		if (r.status !== 0) {
			totals.failed += 1;
			process.stdout.write(`${name} reported problems\n`);
		} else totals.passed += 1;
	}
}

step('build');
buildIfStale();

if (want('vitest')) {
	step('vitest: unit and integration');
	const url = await freshDatabase('skein_test');
	const report = resolve(out, 'vitest.json');
	const r = spawnSync(
		'npx',
		['vitest', 'run', '--reporter=default', '--reporter=json', `--outputFile.json=${report}`],
		{
			cwd: root,
			stdio: 'inherit',
			env: { ...env, DATABASE_URL: url }
		}
	);
	if (existsSync(report)) {
		const j = JSON.parse(readFileSync(report, 'utf8')) as {
			numPassedTests: number;
			numFailedTests: number;
			numPendingTests: number;
			numTodoTests: number;
		};
		totals.passed += j.numPassedTests;
		totals.failed += j.numFailedTests;
		totals.skipped += j.numPendingTests + j.numTodoTests;
	}
	if (r.status !== 0) hardFailure = true;
}

if (want('e2e')) {
	step('playwright: end-to-end in Debian chromium');
	ensureChromium();
	const url = await freshDatabase('skein_e2e');
	const report = resolve(out, 'playwright.json');
	const r = spawnSync('npx', ['playwright', 'test', '--reporter=list,json'], {
		cwd: root,
		stdio: 'inherit',
		env: { ...env, DATABASE_URL: url, PLAYWRIGHT_JSON_OUTPUT_NAME: report }
	});
	if (existsSync(report)) {
		const j = JSON.parse(readFileSync(report, 'utf8')) as {
			stats: { expected: number; unexpected: number; skipped: number; flaky: number };
		};
		totals.passed += j.stats.expected + j.stats.flaky;
		totals.failed += j.stats.unexpected;
		totals.skipped += j.stats.skipped;
	}
	if (r.status !== 0) hardFailure = true;
}

const failed = totals.failed + (hardFailure && totals.failed === 0 ? 1 : 0);
console.log(`\n${totals.passed} passed, ${failed} failed, ${totals.skipped} skipped`);
process.exit(failed > 0 ? 1 : 0);
