import { spawnSync } from 'node:child_process';
import { resolve } from 'node:path';
import { describe, expect, inject, it } from 'vitest';
import { uniqueEmail } from '../support/factories';

const root = resolve(import.meta.dirname, '../..');

function cli(...args: string[]) {
	const r = spawnSync(process.execPath, ['--import', 'tsx', 'tools/cli.ts', ...args], {
		cwd: root,
		encoding: 'utf8',
		env: process.env
	});
	return { code: r.status, out: r.stdout, err: r.stderr };
}

describe('npm run cli', () => {
	it('adds a person, lists them, changes the role; a token it prints works on the API', async () => {
		const email = uniqueEmail('cli');
		const add = cli(
			'people',
			'add',
			'--email',
			email,
			'--role',
			'operator',
			'--password',
			'cli-password-1'
		);
		expect(add.code, add.err).toBe(0);
		expect(cli('people', 'list').out).toContain(`${email}\toperator`);
		expect(cli('people', 'set-role', '--email', email, '--role', 'engineer').code).toBe(0);
		const tok = cli('tokens', 'create', '--email', email, '--name', 'ci');
		expect(tok.code, tok.err).toBe(0);
		const last = tok.out.trim().split('\n').at(-1)!;
		expect(last).toMatch(/^skt_[A-Za-z0-9_-]{32}$/);
		const me = await fetch(`${inject('appUrl')}/api/me`, {
			headers: { authorization: `Bearer ${last}` }
		});
		expect(((await me.json()) as { user: { email: string; role: string } }).user).toMatchObject({
			email,
			role: 'engineer'
		});
	});

	it.each([
		[[], 2, 'usage'],
		[['people', 'fly'], 2, 'unknown command'],
		[['people', 'add', '--email', 'x@y.test'], 2, '--role is required'],
		[['people', 'add', '--email', 'nope', '--role', 'viewer'], 2, 'valid e-mail'],
		[['people', 'add', '--email', 'x@y.test', '--role', 'king'], 2, 'Role must be one of'],
		[
			['people', 'add', '--email', 'x@y.test', '--role', 'viewer', '--password', 'short'],
			2,
			'At least 10'
		],
		[
			['people', 'add', '--email', 'x@y.test', '--role', 'viewer', '--colour', 'red'],
			2,
			'Unknown option'
		],
		[['people', 'set-role', '--email', 'nobody-here@y.test', '--role', 'viewer'], 1, 'no person'],
		[['tokens', 'create', '--email', 'nobody-here@y.test', '--name', 'x'], 1, 'no person']
	])('refuses %j with exit %i and a clear message', (args, code, message) => {
		const r = cli(...(args as string[]));
		expect(r.code).toBe(code);
		expect(r.err + r.out).toContain(message);
	});

	it('refuses a duplicate person', () => {
		const email = uniqueEmail('dup');
		expect(cli('people', 'add', '--email', email, '--role', 'viewer').code).toBe(0);
		const again = cli('people', 'add', '--email', email.toUpperCase(), '--role', 'viewer');
		expect(again.code).toBe(1);
		expect(again.err).toContain('already has an account');
	});
});
