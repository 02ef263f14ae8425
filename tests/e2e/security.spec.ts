/**
 * The Content-Security-Policy in Debian's chromium (issue 11, finding 10): the Run screen's pixi canvas still
 * draws under it without a single violation (the `test` of ./support fails on any), and no other origin can
 * frame a page.
 */
import { createServer } from 'node:http';
import type { AddressInfo } from 'node:net';
import { test as unwatched } from '@playwright/test';
import { admin, expect, makeRigWithKey, signIn, test } from './support';
import { SkeinRigClient } from '../../src/lib/protocol/client';

const base = `http://127.0.0.1:${process.env.E2E_PORT ?? 4317}`;
let runId = '';

test.beforeAll(async () => {
	const rig = await makeRigWithKey('e2e-csp');
	const client = new SkeinRigClient({
		url: base.replace('http', 'ws') + '/ingest/v1',
		key: rig.secret,
		clientRunId: rig.name,
		run: { name: 'csp check', state_fields: ['x', 'y'], measurement_fields: ['x', 'y'] }
	});
	runId = (await client.start()).runId;
	const t0 = Math.floor(Date.now() / 1000) - 60;
	for (let k = 0; k < 40; k++)
		client.send({
			t: t0 + k * 0.05,
			ego: { x: 0, y: 0, heading: 0 },
			measurements: [{ z: [5 + k * 0.1, 2] }, { z: [12, -3] }],
			estimates: [
				{ id: 'a', x: [5 + k * 0.1, 2.1], r: 0.9, P: [0.5, 0, 0, 0.5] },
				{ id: 'b', x: [12.2, -3], r: 0.6, P: [0.8, 0.1, 0.1, 0.4] }
			],
			truth: [
				{ id: 'T1', x: [5 + k * 0.1, 2] },
				{ id: 'T2', x: [12, -3] }
			]
		});
	await client.close();
});

test('the Run screen draws its scene under the page policy', async ({ page }) => {
	await signIn(page, admin);
	await page.goto(`/runs/${runId}?t=1`);
	const canvas = page.getByTestId('scene-canvas');
	await expect(canvas).toBeVisible();
	await expect(page.getByTestId('count-estimates')).toHaveText('2');
	await page.waitForTimeout(500);
	const drawn = await canvas.screenshot();
	// every set layer off: what remains is the empty scene; the sets must have changed the picture
	for (const layer of ['measurements', 'estimates', 'truth'])
		await page.getByTestId(`layer-${layer}`).uncheck();
	await page.waitForTimeout(500);
	const empty = await canvas.screenshot();
	expect(drawn.equals(empty), 'the scene looks the same with and without its sets').toBe(false);
});

unwatched('another origin cannot frame a page', async ({ page }) => {
	// a page of another origin: another port on loopback (chromium keeps pages it cannot place on the network
	// from loading loopback frames at all, so the framing page must really be served from there)
	const framer = createServer((_req, res) => {
		res.writeHead(200, { 'content-type': 'text/html' });
		res.end(`<iframe id="f" src="${base}/sign-in" onload="window.__framed = true"></iframe>`);
	});
	await new Promise<void>((r) => framer.listen(0, '127.0.0.1', r));
	try {
		const { port } = framer.address() as AddressInfo;
		await page.goto(`http://127.0.0.1:${port}/`);
		// the frame has finished loading: the page itself, or chromium's error page in its place
		await page.waitForFunction(
			() => (window as unknown as { __framed?: boolean }).__framed === true
		);
		const frame = page.frames().find((f) => f !== page.mainFrame())!;
		expect(frame.url()).not.toBe(`${base}/sign-in`);
		expect(await page.frameLocator('#f').getByRole('button', { name: 'Sign in' }).count()).toBe(0);
	} finally {
		framer.close();
	}
});
