import { execFileSync } from 'node:child_process';
import { existsSync, readdirSync, statSync } from 'node:fs';
import { join, resolve } from 'node:path';

const root = resolve(import.meta.dirname, '..', '..');

function newest(path: string): number {
	if (!existsSync(path)) return 0;
	const st = statSync(path);
	if (!st.isDirectory()) return st.mtimeMs;
	let max = st.mtimeMs;
	for (const entry of readdirSync(path)) {
		if (entry === 'node_modules' || entry.startsWith('.')) continue;
		max = Math.max(max, newest(join(path, entry)));
	}
	return max;
}

/** Builds the app when build/ is missing or older than its sources. */
export function buildIfStale(): void {
	const output = join(root, 'build', 'handler.js');
	const built = existsSync(output) ? statSync(output).mtimeMs : 0;
	const sources = [
		'src',
		'static',
		'svelte.config.js',
		'vite.config.ts',
		'tailwind.config.ts',
		'package-lock.json'
	];
	const latest = Math.max(...sources.map((s) => newest(join(root, s))));
	if (built >= latest) return;
	process.stderr.write('[build] building the app (vite build)…\n');
	execFileSync('npx', ['vite', 'build', '--logLevel', 'warn'], {
		cwd: root,
		stdio: 'inherit',
		env: { ...process.env, VITE_CONFIG_NATIVE_IGNORE_WARNING: 'true' }
	});
}
