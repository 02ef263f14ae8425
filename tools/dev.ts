/** `npm run dev`: the project's PostgreSQL and migrations, the demo people, then Vite's dev server with the sockets mounted. */
import { spawn } from 'node:child_process';
import { resolve } from 'node:path';
import { closeDb } from '../src/lib/server/db';
import { applyMigrations } from '../src/lib/server/db/migrate';
import { demoCluster, ensureDatabase, startCluster } from './lib/pg';
import { seedDemoPeople } from './seed';

const root = resolve(import.meta.dirname, '..');
const url = process.env.DATABASE_URL ?? startCluster(demoCluster);
process.env.DATABASE_URL = url;
await ensureDatabase(url);
await applyMigrations(url, resolve(root, 'drizzle'));
await seedDemoPeople();
await closeDb();

const vite = spawn(
	'npx',
	['vite', 'dev', '--port', process.env.PORT ?? '5173', ...process.argv.slice(2)],
	{
		cwd: root,
		stdio: 'inherit',
		env: { ...process.env, VITE_CONFIG_NATIVE_IGNORE_WARNING: 'true' }
	}
);
vite.on('exit', (code) => process.exit(code ?? 0));
