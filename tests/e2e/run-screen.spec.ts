/**
 * The Run screen end to end: a rig streams a minute of a simulated crossing to the e2e server; then the run is
 * opened, played, paused, stepped, sought by URL, its layers toggled, an object selected, a moment pinned and
 * reopened by its link. A viewer sees pins but cannot pin.
 */
import type { Page } from '@playwright/test';
import {
	admin,
	viewer,
	makeRigWithKey,
	paintedColours,
	screenPixels,
	setTheme,
	signIn,
	themePalette,
	expect,
	test,
	type ThemeName
} from './support';
import { setColors } from '../../src/lib/set-colors';
import { SkeinRigClient } from '../../src/lib/protocol/client';
import { MEASUREMENT_FIELDS, STATE_FIELDS, simulate } from '../../src/lib/tracking';

const base = `http://127.0.0.1:${process.env.E2E_PORT ?? 4317}`;
let runId = '';
let rigName = '';

const playhead = (page: Page) => page.getByTestId('playhead-time');
/**
 * Each theme paints its own page and panel colours, and the scene drew on its panel background: the
 * canvas's most common colour is the theme's panel colour, yet not all of it, and the teal estimates show.
 */
async function expectTheme(page: Page, theme: ThemeName) {
	await expect.poll(() => paintedColours(page)).toEqual(themePalette[theme]);
	await expect
		.poll(async () => {
			const pixels = await screenPixels(page, page.getByTestId('scene-canvas'), {
				estimate: setColors.estimate
			});
			return {
				background: pixels.dominant,
				drawn: pixels.dominantShare < 0.99,
				estimates: pixels.near.estimate > 20
			};
		})
		.toEqual({ background: themePalette[theme].panel, drawn: true, estimates: true });
}

const seconds = (text: string) => {
	const m = text.match(/T\+(\d+):(\d+\.\d+)/)!;
	return Number(m[1]) * 60 + Number(m[2]);
};

test.beforeAll(async () => {
	test.setTimeout(120_000);
	const rig = await makeRigWithKey('e2e-crossing');
	rigName = rig.name;
	const client = new SkeinRigClient({
		url: base.replace('http', 'ws') + '/ingest/v1',
		key: rig.secret,
		clientRunId: rig.name,
		run: {
			name: 'lanternfall crossing e2e',
			state_fields: [...STATE_FIELDS],
			measurement_fields: [...MEASUREMENT_FIELDS],
			tags: ['e2e', 'crossing']
		}
	});
	runId = (await client.start()).runId;
	for (const step of simulate('lanternfall-crossing', {
		seed: 7,
		durationS: 60,
		startEpoch: Math.floor(Date.now() / 1000) - 600
	})) {
		const { seq: _seq, ...frame } = step.frame;
		client.send(frame);
	}
	await client.close();
});

test('open a run: play, pause, step, seek by URL, layers, select, pin and reopen by link', async ({
	page
}) => {
	test.setTimeout(120_000);
	await signIn(page, admin);
	await page.goto('/runs');
	const row = page.getByTestId('runs-table').locator('tr', { hasText: rigName });
	await expect(row).toContainText('1 min');
	await page.getByTestId('runs-search').fill(rigName);
	await expect(page.getByTestId('runs-table').locator('tbody tr')).toHaveCount(1);
	await row.click();
	await expect(page).toHaveURL(new RegExp(`/runs/${runId}`));

	await expect(page.getByTestId('scene-canvas')).toBeVisible();
	await expect(page.getByTestId('count-estimates')).not.toHaveText('—');
	await expect(playhead(page)).toHaveText('T+00:00.000');

	await page.keyboard.press('Space');
	await page.waitForTimeout(1500);
	await page.keyboard.press('Space');
	const played = seconds(await playhead(page).innerText());
	expect(played).toBeGreaterThan(0.5);
	await expect(page).toHaveURL(/[?&]t=\d/);

	await page.keyboard.press('ArrowRight');
	await expect.poll(async () => seconds(await playhead(page).innerText())).toBeGreaterThan(played);
	const stepped = seconds(await playhead(page).innerText());
	expect(stepped - played).toBeLessThanOrEqual(0.051);
	await page.keyboard.press('Shift+ArrowRight');
	await expect
		.poll(async () => seconds(await playhead(page).innerText()))
		.toBeCloseTo(stepped + 1, 1);

	await page.goto(`/runs/${runId}?t=30`);
	await expect(playhead(page)).toHaveText('T+00:30.000');
	await expect(page.getByTestId('count-truth')).not.toHaveText('—');
	await expect(page.getByTestId('catching-up')).toHaveCount(0);

	await page.keyboard.press('1');
	await expect(page.getByTestId('layer-measurements')).not.toBeChecked();
	await page.keyboard.press('1');
	await expect(page.getByTestId('layer-measurements')).toBeChecked();
	await page.getByTestId('layer-truth').click();
	await expect(page.getByTestId('layer-truth')).not.toBeChecked();
	await page.keyboard.press('3');
	await expect(page.getByTestId('layer-truth')).toBeChecked();

	await page.getByTestId('sets-ledger').getByText('estimates in this frame').click();
	await page.getByTestId('ledger-estimate').first().click();
	await expect(page.getByTestId('inspector-title')).toContainText('estimate');
	const selected = await page.getByTestId('inspector-title').innerText();

	await expectTheme(page, 'paper');
	await page.screenshot({ path: 'test-results/artifacts/run-screen-paper.png' });

	await page.keyboard.press('p');
	const dialog = page.getByTestId('pin-dialog');
	await expect(dialog).toBeVisible();
	await dialog.getByRole('button', { name: 'Pin', exact: true }).click();
	await expect(dialog.locator('[data-field-error="title"]')).toContainText('title');
	await dialog.getByLabel('Title').fill('Crossing pedestrian confirmed late');
	await dialog
		.getByLabel('Note')
		.fill('Estimate appears about a second after the truth object enters the view.');
	await dialog.getByLabel('Category').selectOption('late confirmation');
	await dialog.getByLabel('Severity').selectOption('high');
	await dialog.getByRole('button', { name: 'Pin', exact: true }).click();
	await expect(page.getByTestId('pinned-notice')).toBeVisible();
	await expect(page.getByTestId('pin-notch')).toHaveCount(1);
	const href = await page.getByTestId('pinned-link').getAttribute('href');

	await page.goto(`/runs/${runId}`);
	await expect(playhead(page)).toHaveText('T+00:00.000');
	await page.goto(`/runs/${runId}${href}`);
	await expect(playhead(page)).toHaveText('T+00:30.000');
	await expect(page.getByTestId('inspector-title')).toHaveText(selected);
	await expect(page.getByTestId('layer-truth')).toBeChecked();

	await page.goto('/pins');
	await expect(page.getByTestId('pins-table')).toContainText('Crossing pedestrian confirmed late');

	await page.goto(`/runs/${runId}?t=30`);
	await expect(page.getByTestId('count-estimates')).not.toHaveText('—');
	await setTheme(page, 'night');
	await expectTheme(page, 'night');
	await page.screenshot({ path: 'test-results/artifacts/run-screen-night.png' });
});

test('a viewer sees pins but has no pin button, and the API refuses', async ({ page }) => {
	await signIn(page, viewer);
	await page.goto(`/runs/${runId}`);
	await expect(page.getByTestId('scene-canvas')).toBeVisible();
	await expect(page.getByTestId('pin-list')).toBeVisible();
	await expect(page.getByTestId('pin-button')).toHaveCount(0);
	await page.keyboard.press('p');
	await expect(page.getByTestId('pin-dialog')).toHaveCount(0);
	const res = await page.request.post(`/api/runs/${runId}/pins`, {
		data: {
			title: 'x',
			category: 'other',
			severity: 'low',
			t: 1,
			view: { zoom: 1, cx: 0, cy: 0, layers: [] }
		},
		headers: { origin: base }
	});
	expect(res.status()).toBe(403);
	const form = await page.request.post(`/runs/${runId}?/pin`, {
		form: { title: 'x' },
		headers: { origin: base }
	});
	expect(form.status()).toBe(403);
});
