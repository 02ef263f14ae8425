/** The run statuses and coordinate frames are declared once, in runs.ts: a copy written out elsewhere drifts. */
import { readdirSync, readFileSync } from 'node:fs';
import { join, relative, resolve } from 'node:path';
import { describe, expect, it } from 'vitest';

const root = resolve(import.meta.dirname, '..', '..');
const home = 'src/lib/runs.ts';

function* sources(dir: string): Generator<string> {
	for (const entry of readdirSync(dir, { withFileTypes: true })) {
		if (entry.name === 'node_modules' || entry.name.startsWith('.')) continue;
		const path = join(dir, entry.name);
		if (entry.isDirectory()) yield* sources(path);
		else if (/\.(ts|svelte)$/.test(entry.name)) yield path;
	}
}

const status = `'(?:live|ended|interrupted|imported)'`;
const coords = `'(?:world|ego)'`;
/** a union type or an enum of two or more of the literals */
const copies = [
	new RegExp(`${status}\\s*\\|\\s*${status}`),
	new RegExp(`${coords}\\s*\\|\\s*${coords}`),
	new RegExp(`[eE]num\\(\\s*(?:'[^']*',\\s*)?\\[\\s*${status}\\s*,\\s*${status}`),
	new RegExp(`[eE]num\\(\\s*(?:'[^']*',\\s*)?\\[\\s*${coords}\\s*,\\s*${coords}`),
	new RegExp(`#each \\[\\s*${status}\\s*,`)
];

describe('run statuses and coordinate frames', () => {
	it(`are written out only in ${home}`, () => {
		const found: string[] = [];
		for (const dir of ['src', 'server-ws', 'tools', 'tests'])
			for (const file of sources(join(root, dir))) {
				const name = relative(root, file);
				if (name === home || name === 'src/lib/runs.test.ts') continue;
				readFileSync(file, 'utf8')
					.split('\n')
					.forEach((line, i) => {
						if (copies.some((re) => re.test(line))) found.push(`${name}:${i + 1}: ${line.trim()}`);
					});
			}
		expect(found).toEqual([]);
	});
});
