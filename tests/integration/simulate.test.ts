/**
 * The simulated rig streams through the real protocol and survives a server restart: the app is killed
 * mid-run (some frames stored, not all) and started again on the same port; the rig sees the drop, resumes
 * the same run at the first frame not stored, and the run holds every frame once, identical to what the
 * simulator generates for that seed.
 */
import { spawnSync } from 'node:child_process';
import { resolve } from 'node:path';
import { describe, expect, it } from 'vitest';
import { simulate } from '$lib/tracking';
import { sqlClient } from '$server/db';
import { runSimulatedRig } from '../../tools/sim/rig';
import { freePort, startApp } from '../support/app';
import { makeRigWithKey } from '../support/rigs';

describe('simulated rig', () => {
	it('resumes after the server restarts; the stored run equals the generated one', async () => {
		const port = await freePort();
		let app = await startApp({ PORT: String(port) });
		const rig = await makeRigWithKey('sim');
		const startEpoch = 1_790_400_000;
		const log: string[] = [];
		const streaming = runSimulatedRig({
			url: `ws://127.0.0.1:${port}/ingest/v1`,
			key: rig.secret,
			scenario: 'glassmere-reach',
			seed: 7,
			speed: 20,
			durationS: 40,
			startEpoch,
			clientRunId: 'restart-test',
			log: (line) => log.push(line)
		});
		// let part of the run through, then kill the server under the rig and bring it back
		const sql = sqlClient();
		const stored = async () => {
			const [r] = await sql<
				{ n: number }[]
			>`select coalesce(max(frame_count), 0)::int as n from runs where client_run_id = 'restart-test'`;
			return r.n;
		};
		for (let i = 0; i < 200; i++) {
			if ((await stored()) > 100) break;
			await new Promise((res) => setTimeout(res, 50));
		}
		await app.stop('SIGKILL');
		const atKill = await stored();
		await new Promise((res) => setTimeout(res, 500));
		app = await startApp({ PORT: String(port) });
		try {
			// the kill came mid-run: some frames were stored, not all of them
			expect(atKill).toBeGreaterThan(100);
			expect(atKill).toBeLessThan(800);
			const result = await streaming;
			expect(result.frames).toBe(800);
			// the rig lost its server, and resumed the same run on the new one where the old one stopped
			expect(log.some((l) => l.startsWith('disconnected'))).toBe(true);
			const resumed = log
				.map((l) => /^resumed run (\S+) at seq (\d+)$/.exec(l))
				.filter((m) => m !== null);
			expect(resumed).toHaveLength(1);
			expect(resumed[0][1]).toBe(result.runId);
			expect(Number(resumed[0][2])).toBe(atKill);
			const rows = await sql<{ seq: number; n: number }[]>`
				select seq::int, count(*)::int as n from frames where run_id = ${result.runId} group by seq order by seq`;
			expect(rows).toHaveLength(800);
			expect(rows.every((r, i) => r.seq === i && r.n === 1)).toBe(true);
			const [run] = await sql<
				{ status: string }[]
			>`select status::text from runs where id = ${result.runId}`;
			expect(run.status).toBe('ended');
			// spot-check stored frames against a fresh generation with the same seed
			const expected = [...simulate('glassmere-reach', { seed: 7, durationS: 40, startEpoch })];
			const res = await fetch(
				`${app.url}/api/runs/${result.runId}/frames?from_seq=395&to_seq=405`,
				{
					headers: { authorization: `Bearer ${await token()}` }
				}
			);
			const { frames } = (await res.json()) as { frames: unknown[] };
			expect(frames).toEqual(expected.slice(395, 406).map((s) => s.frame));
		} finally {
			await app.stop();
		}
	});

	it('the CLI refuses bad arguments with exit 2', () => {
		const root = resolve(import.meta.dirname, '../..');
		for (const [args, message] of [
			[['simulate', '--rig', 'x'], '--scenario is required'],
			[['simulate', '--rig', 'x', '--scenario', 'moonbase'], 'unknown scenario'],
			[
				['simulate', '--rig', 'x', '--scenario', 'brassnettle-yard', '--speed=-1'],
				'--speed must be'
			],
			[
				['simulate', '--rig', 'x', '--scenario', 'brassnettle-yard', '--seed', '1.5'],
				'--seed must be'
			],
			[
				['simulate', '--rig', 'x', '--scenario', 'brassnettle-yard', '--url', 'http://x'],
				'--url must start'
			],
			[['simulate', '--scenario', 'brassnettle-yard'], '--rig is required']
		] as [string[], string][]) {
			const r = spawnSync(process.execPath, ['--import', 'tsx', 'tools/cli.ts', ...args], {
				cwd: root,
				encoding: 'utf8',
				env: process.env
			});
			expect(r.status, args.join(' ')).toBe(2);
			expect(r.stderr).toContain(message);
		}
	});
});

let cached: string | undefined;
async function token() {
	if (cached) return cached;
	const { makePerson } = await import('../support/factories');
	const { createApiToken } = await import('$server/people');
	const p = await makePerson('viewer', 'sim');
	cached = (await createApiToken({ id: p.id, label: p.email }, p.id, 'sim')).token;
	return cached;
}
