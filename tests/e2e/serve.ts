/** The app for the end-to-end run: seeds the demo sign-in into the e2e database, then serves the build. */
import { closeDb } from '../../src/lib/server/db';
import { seedDemoPeople } from '../../tools/seed';

await seedDemoPeople();
await closeDb();
await import('../../server-ws/server');
