/**
 * The demo, all invented: people to sign in as, rigs with feed keys, three recorded runs streamed through the
 * real ingest protocol, and (from tools/start.ts) one rig that keeps streaming live. Idempotent and resumable.
 */
import { systemActor } from '../src/lib/server/auth/audit';
import { sqlClient } from '../src/lib/server/db';
import { createUser, findUserByEmail } from '../src/lib/server/people';
import { createFeedKey, createRig, findRigByName } from '../src/lib/server/rigs';
import { runSimulatedRig } from './sim/rig';

export const demoAdmin = {
	email: process.env.DEMO_ADMIN_EMAIL ?? 'admin@skein.test',
	password: process.env.DEMO_ADMIN_PASSWORD ?? 'skein-demo-admin'
};

const demoPeople = [
	{ email: 'ines.varga@skein.test', name: 'Ines Varga', role: 'operator' as const },
	{ email: 'tomas.oyelaran@skein.test', name: 'Tomas Oyelaran', role: 'engineer' as const },
	{ email: 'mei.castellan@skein.test', name: 'Mei Castellan', role: 'triage' as const },
	{ email: 'ruben.alsaker@skein.test', name: 'Ruben Alsaker', role: 'viewer' as const }
];

export const demoRigs = [
	{
		name: 'Marten-3',
		description: 'Estate car with a roof-mounted sensor halo; junction and town loops.'
	},
	{ name: 'Heron-7', description: 'Motorway test vehicle with a long-range front radar.' },
	{
		name: 'Bench Loom',
		description: 'Bench rig replaying yard captures through the tracker under test.'
	}
];

/** Recorded runs: fixed seeds and start times, so a half-seeded demo resumes where it stopped. */
const recordedRuns = [
	{
		rig: 'Marten-3',
		scenario: 'lanternfall-crossing',
		seed: 11,
		startEpoch: Date.UTC(2026, 10, 24, 7, 40) / 1000,
		clientRunId: 'demo-lanternfall-1',
		runName: 'Lanternfall crossing · morning loop',
		tags: ['junction', 'demo']
	},
	{
		rig: 'Heron-7',
		scenario: 'glassmere-reach',
		seed: 5,
		startEpoch: Date.UTC(2026, 10, 26, 13, 5) / 1000,
		clientRunId: 'demo-glassmere-1',
		runName: 'Glassmere reach · merge and overtake (object lost behind the lorry)',
		tags: ['motorway', 'occlusion', 'demo']
	},
	{
		rig: 'Bench Loom',
		scenario: 'brassnettle-yard',
		seed: 3,
		startEpoch: Date.UTC(2026, 10, 28, 16, 20) / 1000,
		clientRunId: 'demo-brassnettle-1',
		runName: 'Brassnettle yard · clutter by the loading bay (false track)',
		tags: ['yard', 'clutter', 'demo']
	}
];

export const liveDemo = { rig: 'Marten-3', scenario: 'lanternfall-crossing' };

export async function seedDemoPeople(): Promise<void> {
	if (!(await findUserByEmail(demoAdmin.email))) {
		await createUser(systemActor, {
			email: demoAdmin.email,
			role: 'admin',
			name: 'Demo Admin',
			password: demoAdmin.password
		});
	}
	for (const p of demoPeople) {
		if (!(await findUserByEmail(p.email)))
			await createUser(systemActor, { ...p, password: demoAdmin.password });
	}
}

/** Back-compatible name used by the e2e server. */
export const seedDemo = seedDemoPeople;

const seedActor = { ...systemActor, label: 'demo seed' };

async function rigId(name: string): Promise<string> {
	const rig = demoRigs.find((r) => r.name === name)!;
	return ((await findRigByName(name)) ?? (await createRig(seedActor, rig))).id;
}

/** A fresh feed key for a demo rig; the seed never needs an old one again. */
export async function demoKey(rigName: string, label: string): Promise<string> {
	return (await createFeedKey(seedActor, await rigId(rigName), { label })).secret;
}

export async function seedDemoRuns(
	ingestUrl: string,
	log: (line: string) => void = () => {}
): Promise<void> {
	for (const r of demoRigs) await rigId(r.name);
	for (const run of recordedRuns) {
		const [done] = await sqlClient()<{ n: number }[]>`
			select count(*)::int as n from runs where client_run_id = ${run.clientRunId} and status = 'ended'`;
		if (done.n > 0) continue;
		log(`recording demo run "${run.runName}"`);
		await runSimulatedRig({
			url: ingestUrl,
			key: await demoKey(run.rig, 'demo seed'),
			speed: 0,
			...run
		});
	}
}
