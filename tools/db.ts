/** `npm run db:start` / `npm run db:stop`: the project's own PostgreSQL on 127.0.0.1. */
import { applyMigrations } from '../src/lib/server/db/migrate';
import { demoCluster, ensureDatabase, startCluster, stopCluster, testCluster } from './lib/pg';

const [cmd, which] = process.argv.slice(2);
const cluster = which === 'test' ? testCluster : demoCluster;

if (cmd === 'start') {
	const url = process.env.DATABASE_URL ?? startCluster(cluster);
	await ensureDatabase(url, { relaxed: cluster.relaxedDatabases && !process.env.DATABASE_URL });
	await applyMigrations(url);
	console.log(url.replace(/:[^:@/]+@/, ':***@'));
} else if (cmd === 'stop') {
	stopCluster(cluster);
} else {
	console.error('usage: tsx tools/db.ts start|stop [test]');
	process.exit(2);
}
