/**
 * Run after `npm install` (package.json `postinstall`): guards postgres.js 3.4.9 against writing to a
 * connection whose socket is already gone. Upstream (porsager/postgres issues 1066, 1154, 1208; fixes
 * proposed in pull requests 1168, 1176, 1209, none released as of 3.4.9, the newest 3.4.x):
 *
 * - a write smaller than 1 KiB is flushed from a setImmediate; when the connection closes first (PostgreSQL
 *   restarted or crashed), `nextWrite` reads `socket.write` of null and throws from the immediate, where
 *   nothing can catch it, and the whole process dies. `sql.begin()` hits it by itself: its ROLLBACK after the
 *   failed query goes to the dead connection.
 * - `closed()` cancels the pending flush but keeps its timer handle and the unsent bytes, so a later write on
 *   that connection is never flushed (its query waits forever) and the stale bytes would go out before the
 *   next connection's startup message.
 *
 * The patch settles such a write with CONNECTION_CLOSED (the error every other path of a closed connection
 * gives) and lets `closed()` drop what it cannot send. Idempotent; fails loudly when postgres.js changed, so an
 * upgrade is checked: drop this script once a release has the fix.
 */
import { existsSync, readFileSync, writeFileSync } from 'node:fs';
import { resolve } from 'node:path';

const marker = 'skein: guarded write (tools/patch-postgres.ts)';

const edits: { from: string; to: string }[] = [
	{
		from: `  function nextWrite(fn) {
    const x = socket.write(chunk, fn)`,
		to: `  function nextWrite(fn) {
    if (socket === null) { // ${marker}
      nextWriteTimer !== null && clearImmediate(nextWriteTimer)
      chunk = nextWriteTimer = null
      const err = Errors.connection('CONNECTION_CLOSED', options, socket)
      query && (queryError(query, err), query = null)
      while (sent.length)
        queryError(sent.shift(), err)
      return false
    }
    const x = socket.write(chunk, fn)`
	},
	{
		from: `    incomings = null
    clearImmediate(nextWriteTimer)
    socket.removeListener('data', data)`,
		to: `    incomings = null
    clearImmediate(nextWriteTimer)
    chunk = nextWriteTimer = null // ${marker}
    socket.removeListener('data', data)`
	}
];

const root = resolve(import.meta.dirname, '..', 'node_modules', 'postgres');
const files = ['src/connection.js', 'cjs/src/connection.js'].map((f) => resolve(root, f));

if (!existsSync(root)) {
	process.stderr.write('[patch-postgres] postgres is not installed; nothing to patch\n');
} else {
	for (const file of files) {
		let text = readFileSync(file, 'utf8');
		if (text.includes(marker)) continue;
		for (const { from, to } of edits) {
			if (!text.includes(from)) {
				process.stderr.write(
					`[patch-postgres] ${file} does not hold the code this patch expects: postgres.js changed. ` +
						'Check whether its release fixes the null-socket write, then drop or update tools/patch-postgres.ts.\n'
				);
				process.exit(1);
			}
			text = text.replace(from, to);
		}
		writeFileSync(file, text);
		process.stderr.write(`[patch-postgres] patched ${file}\n`);
	}
}
