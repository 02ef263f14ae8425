/**
 * Following live end to end: a simulated rig streams in real time to the e2e server; the Live board shows its
 * tile, the tile opens the Run screen following live, frames keep arriving on the scene, a step back pauses
 * following, `L` returns to live, and the end of the run is said on the screen.
 */
import type { Page } from '@playwright/test';
import { viewer, makeRigWithKey, signIn, expect, test } from './support';
import { runSimulatedRig } from '../../tools/sim/rig';
import { SkeinRigClient } from '../../src/lib/protocol/client';

const base = `http://127.0.0.1:${process.env.E2E_PORT ?? 4317}`;
const runName = `live follow e2e ${Date.now().toString(36)}`;
const stop = new AbortController();
let streaming: Promise<unknown> | null = null;

const sceneSeq = (page: Page) => page.evaluate(() => window.__skeinScene?.seq ?? null);
const liveSeq = async (page: Page) =>
	Number((await page.getByTestId('live-seq').textContent())!.replace('#', ''));

test.beforeAll(async () => {
	const rig = await makeRigWithKey('e2e-live');
	streaming = runSimulatedRig({
		url: base.replace('http', 'ws') + '/ingest/v1',
		key: rig.secret,
		scenario: 'lanternfall-crossing',
		seed: 11,
		speed: 1,
		durationS: 180,
		runName,
		signal: stop.signal
	});
});

test.afterAll(async () => {
	stop.abort();
	await streaming;
});

test('the Live board shows the streaming run; its tile follows it live on the Run screen until it ends', async ({
	page
}) => {
	await signIn(page, viewer);
	await page.goto('/live');
	const tile = page.getByTestId('live-tile').filter({ hasText: runName });
	await expect(tile).toBeVisible({ timeout: 15_000 });
	await expect(tile.getByTestId('tile-fps')).toHaveText(/\d+(\.\d)? Hz/, { timeout: 10_000 });
	await expect(tile.getByTestId('tile-estimates')).toHaveText(/^\d+$/);

	await tile.click();
	await expect(page).toHaveURL(/\/runs\/[0-9a-f-]+\?live/);
	const bar = page.getByTestId('live-bar');
	await expect(bar).toHaveAttribute('data-state', 'following', { timeout: 15_000 });
	const lengthAtOpen = await page.getByTestId('run-length').innerText();
	const first = await liveSeq(page);
	await expect.poll(() => liveSeq(page), { timeout: 10_000 }).toBeGreaterThan(first + 5);
	// the scene draws the frames it follows
	const drawn = (await sceneSeq(page)) ?? -1;
	await expect
		.poll(async () => (await sceneSeq(page)) ?? -1, { timeout: 10_000 })
		.toBeGreaterThan(drawn);
	await expect(page.getByTestId('live-latency')).toHaveText(/\d+ ms/);
	if (process.env.LIVE_SHOTS) await page.screenshot({ path: 'test-results/live-following.png' });

	// the timeline grows with the run while following
	await expect(page.getByTestId('run-length')).not.toHaveText(lengthAtOpen);

	// a step back into history pauses following; frames still arrive, the scene stays put
	await page.keyboard.press('ArrowLeft');
	await expect(bar).toHaveAttribute('data-state', 'live');
	const held = await sceneSeq(page);
	const seqWhilePaused = await liveSeq(page);
	await expect.poll(() => liveSeq(page), { timeout: 10_000 }).toBeGreaterThan(seqWhilePaused + 3);
	expect(await sceneSeq(page)).toBe(held);

	// L returns to the live edge
	await page.keyboard.press('l');
	await expect(bar).toHaveAttribute('data-state', 'following');
	await expect
		.poll(async () => (await sceneSeq(page)) ?? -1, { timeout: 10_000 })
		.toBeGreaterThan(seqWhilePaused);

	// the rig stops: the run ends while watched
	stop.abort();
	await streaming;
	await expect(page.getByTestId('live-notice')).toContainText('ended', { timeout: 15_000 });
	await expect(bar).toHaveAttribute('data-state', 'ended');
});

test('a live run that had no frames when its page opened grows on the timeline, and what arrived can be scrubbed', async ({
	page
}) => {
	const rig = await makeRigWithKey('e2e-empty-start');
	const client = new SkeinRigClient({
		url: base.replace('http', 'ws') + '/ingest/v1',
		key: rig.secret,
		clientRunId: `empty-start-${Date.now().toString(36)}`,
		run: {
			name: 'opened before its first frame',
			state_fields: ['x', 'y', 'vx', 'vy'],
			measurement_fields: ['x', 'y']
		}
	});
	const { runId } = await client.start();
	try {
		await signIn(page, viewer);
		await page.goto(`/runs/${runId}?live`);
		const bar = page.getByTestId('live-bar');
		await expect(page.getByTestId('run-length')).toHaveText('/ T+00:00.000');

		// frames start after the page is open: 20 Hz for about 4 s
		const t0 = Date.now() / 1000;
		for (let k = 0; k < 80; k++) {
			client.send({
				t: t0 + k * 0.05,
				estimates: [{ id: 1, x: [k * 0.2, 1, 4, 0], r: 0.9 }],
				truth: [{ id: 'a', x: [k * 0.2, 1.1, 4, 0] }]
			});
			await new Promise((r) => setTimeout(r, 50));
		}
		await client.flush();
		await expect(bar).toHaveAttribute('data-state', 'following', { timeout: 10_000 });
		await expect(page.getByTestId('run-length')).not.toHaveText('/ T+00:00.000');
		const latest = await liveSeq(page);
		expect(latest).toBeGreaterThan(40);
		// trails draw while following, from the frames shown live
		expect(await page.evaluate(() => window.__skeinScene?.trail ?? 0)).toBeGreaterThan(20);
		// the strips grow with the run too
		await expect
			.poll(async () => Number(await page.getByTestId('strips').getAttribute('data-points')), {
				timeout: 10_000
			})
			.toBeGreaterThan(10);

		// back into what arrived: the frame shown comes from the stored run
		for (let k = 0; k < 10; k++) await page.keyboard.press('ArrowLeft');
		await expect(bar).toHaveAttribute('data-state', 'live');
		await expect
			.poll(async () => (await sceneSeq(page)) ?? -1, { timeout: 10_000 })
			.toBeLessThan(latest);
		expect((await sceneSeq(page)) ?? -1).toBeGreaterThanOrEqual(0);
	} finally {
		await client.close();
	}
});
