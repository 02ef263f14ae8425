/**
 * Starts the built app (server-ws/server.ts) as a child process on a free loopback port,
 * against the given database, with its own mail catcher.
 */
import { spawn, type ChildProcess } from 'node:child_process';
import { createServer } from 'node:net';
import { resolve } from 'node:path';

const root = resolve(import.meta.dirname, '..', '..');

export function freePort(): Promise<number> {
	return new Promise((res, rej) => {
		const s = createServer();
		s.once('error', rej);
		s.listen(0, '127.0.0.1', () => {
			const addr = s.address();
			const port = typeof addr === 'object' && addr ? addr.port : 0;
			s.close(() => res(port));
		});
	});
}

export interface RunningApp {
	url: string;
	port: number;
	child: ChildProcess;
	output: () => string;
	stop(signal?: NodeJS.Signals): Promise<void>;
}

export async function startApp(
	env: Record<string, string> = {},
	nodeArgs: string[] = []
): Promise<RunningApp> {
	const port = env.PORT ? Number(env.PORT) : await freePort();
	let out = '';
	const child = spawn(
		process.execPath,
		[...nodeArgs, '--import', 'tsx', resolve(root, 'server-ws/server.ts')],
		{
			cwd: root,
			env: {
				...process.env,
				PORT: String(port),
				HOST: '127.0.0.1',
				NODE_ENV: 'production',
				MAIL_CATCHER_PORT: '0',
				LOG_LEVEL: 'warn',
				...env
			},
			stdio: ['ignore', 'pipe', 'pipe']
		}
	);
	child.stdout!.on('data', (d) => (out += d));
	child.stderr!.on('data', (d) => (out += d));
	const url = `http://127.0.0.1:${port}`;
	const deadline = Date.now() + 30_000;
	for (;;) {
		if (child.exitCode !== null) throw new Error(`app exited early:\n${out}`);
		try {
			const r = await fetch(`${url}/healthz`);
			if (r.ok) break;
		} catch {
			/* not up yet */
		}
		if (Date.now() > deadline) throw new Error(`app did not come up:\n${out}`);
		await new Promise((r) => setTimeout(r, 150));
	}
	return {
		url,
		port,
		child,
		output: () => out,
		stop: (signal = 'SIGTERM') =>
			new Promise((res) => {
				if (child.exitCode !== null) return res();
				child.once('exit', () => res());
				child.kill(signal);
			})
	};
}
