/**
 * `npm run cli -- simulate --rig NAME --scenario NAME [--speed 4] [--duration 300] [--seed N] [--url URL] [--key KEY]`
 * Streams a simulated rig to a running Skein. Without --key (or SKEIN_FEED_KEY) it makes a feed key for the
 * rig (creating the rig when needed), labelled "simulator". Ctrl-C closes the run cleanly.
 */
import { listScenarios } from '../../src/lib/tracking';
import { systemActor } from '../../src/lib/server/auth/audit';
import { createFeedKey, createRig, findRigByName } from '../../src/lib/server/rigs';
import { runSimulatedRig } from './rig';

export interface SimulateArgs {
	rig: string;
	scenario: string;
	speed: number;
	duration?: number;
	seed: number;
	url: string;
	key?: string;
	loop: boolean;
}

export class SimulateUsageError extends Error {}

export function parseSimulateArgs(
	values: Record<string, string | boolean | undefined>
): SimulateArgs {
	const names = listScenarios().map((s) => s.name);
	const rig = values.rig;
	const scenario = values.scenario;
	if (typeof rig !== 'string' || !rig.trim()) throw new SimulateUsageError('--rig is required');
	if (typeof scenario !== 'string')
		throw new SimulateUsageError(`--scenario is required: one of ${names.join(', ')}`);
	if (!names.includes(scenario))
		throw new SimulateUsageError(`unknown scenario "${scenario}": one of ${names.join(', ')}`);
	const num = (
		name: string,
		fallback: number | undefined,
		ok: (n: number) => boolean,
		rule: string
	) => {
		const v = values[name];
		if (v === undefined) return fallback;
		const n = Number(v);
		if (typeof v !== 'string' || v.trim() === '' || !Number.isFinite(n) || !ok(n))
			throw new SimulateUsageError(`--${name} must be ${rule}`);
		return n;
	};
	const port = process.env.PORT ?? '3000';
	const url = typeof values.url === 'string' ? values.url : `ws://127.0.0.1:${port}/ingest/v1`;
	if (!/^wss?:\/\//.test(url))
		throw new SimulateUsageError('--url must start with ws:// or wss://');
	return {
		rig: rig.trim(),
		scenario,
		speed: num(
			'speed',
			1,
			(n) => n >= 0 && n <= 1000,
			'a number from 0 (as fast as possible) to 1000'
		)!,
		duration: num(
			'duration',
			undefined,
			(n) => n > 0 && n <= 86_400,
			'seconds, more than 0 and at most 86400'
		),
		seed: num(
			'seed',
			1,
			(n) => Number.isInteger(n) && n >= 0 && n < 2 ** 32,
			'a whole number from 0 to 4294967295'
		)!,
		url: url.endsWith('/ingest/v1') ? url : url.replace(/\/$/, '') + '/ingest/v1',
		key: typeof values.key === 'string' ? values.key : process.env.SKEIN_FEED_KEY,
		loop: values.loop === true
	};
}

/** A feed key for the rig, made for this simulator session (the rig is created when missing). */
export async function simulatorKey(rigName: string): Promise<string> {
	const actor = { ...systemActor, label: 'simulator' };
	const rig =
		(await findRigByName(rigName)) ??
		(await createRig(actor, { name: rigName, description: 'Simulated rig' }));
	const created = await createFeedKey(actor, rig.id, { label: 'simulator' });
	return created.secret;
}

export async function simulate(
	args: SimulateArgs,
	signal: AbortSignal,
	log: (line: string) => void
): Promise<void> {
	const key = args.key ?? (await simulatorKey(args.rig));
	let seed = args.seed;
	do {
		const result = await runSimulatedRig({
			url: args.url,
			key,
			scenario: args.scenario,
			seed,
			speed: args.speed,
			durationS: args.duration,
			signal,
			log
		});
		log(
			`run ${result.runId} closed with ${result.frames} frames${result.aborted ? ' (stopped)' : ''}`
		);
		seed += 1;
	} while (args.loop && !signal.aborted);
}
