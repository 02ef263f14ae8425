/**
 * `npm start`: PostgreSQL, migrations, demo seed, build when stale, then the app (with its mail catcher)
 * on PORT. Prints the URL and the demo sign-in.
 */
import { spawn } from 'node:child_process';
import { resolve } from 'node:path';
import { applyMigrations } from '../src/lib/server/db/migrate';
import { closeDb } from '../src/lib/server/db';
import { buildIfStale } from './lib/build';
import { demoCluster, ensureDatabase, startCluster } from './lib/pg';
import { demoAdmin, seedDemo } from './seed';

const root = resolve(import.meta.dirname, '..');
const port = Number(process.env.PORT ?? 3000);

const url = process.env.DATABASE_URL ?? startCluster(demoCluster);
process.env.DATABASE_URL = url;
await ensureDatabase(url);
await applyMigrations(url, resolve(root, 'drizzle'));
await seedDemo();
await closeDb();
buildIfStale();

const app = spawn(process.execPath, ['--import', 'tsx', resolve(root, 'server-ws/server.ts')], {
	cwd: root,
	stdio: ['ignore', 'inherit', 'inherit'],
	env: { ...process.env, PORT: String(port), NODE_ENV: 'production', MAIL_CATCHER_PORT: process.env.MAIL_CATCHER_PORT ?? '2525' }
});

const shown = `http://127.0.0.1:${port}`;
setTimeout(() => {
	console.log(`\n  Skein is up: ${shown}\n  Demo sign-in: ${demoAdmin.email} / ${demoAdmin.password}\n  Stop with Ctrl-C (PostgreSQL keeps running; npm run db:stop stops it).\n`);
}, 1500);

for (const sig of ['SIGINT', 'SIGTERM'] as const) process.on(sig, () => app.kill(sig));
app.on('exit', (code) => process.exit(code ?? 0));
