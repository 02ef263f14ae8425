/**
 * The API page: reached from the navigation by any signed-in role, it shows every route of the API
 * document with its access, in both themes.
 */
import { expect, test } from '@playwright/test';
import { paintedColours, setTheme, signIn, themePalette, viewer, type ThemeName } from './support';

interface Doc {
	paths: Record<string, Record<string, { summary: string }>>;
}

test('the API page lists every route of /api/openapi.json with its role, in both themes', async ({
	page
}) => {
	await page.setViewportSize({ width: 1440, height: 900 });
	await signIn(page, viewer);
	await page.getByRole('navigation', { name: 'Main' }).getByRole('link', { name: 'API' }).click();
	await expect(page).toHaveURL(/\/api$/);
	await expect(page.getByRole('heading', { name: 'API', level: 1 })).toBeVisible();

	const res = await page.request.get('/api/openapi.json');
	expect(res.status()).toBe(200);
	const doc = (await res.json()) as Doc;
	const expected = Object.entries(doc.paths)
		.flatMap(([path, ops]) => Object.keys(ops).map((m) => `${m.toUpperCase()} ${path}`))
		.sort();
	expect(expected.length).toBeGreaterThan(30);

	const sections = page.getByTestId('api-operation');
	await expect(sections).toHaveCount(expected.length);
	const shown = (
		await sections.evaluateAll((els) =>
			els.map(
				(el) =>
					`${el.querySelector('[data-method]')?.textContent?.trim()} ${el.querySelector('[data-testid="api-path"]')?.textContent?.trim()}`
			)
		)
	).sort();
	expect(shown).toEqual(expected);

	const settings = page.locator('#putRunsIdSettings');
	await expect(settings.getByTestId('api-access')).toContainText('admin, engineer');
	await expect(settings.getByTestId('api-access')).toContainText('runs:configure');
	await expect(settings.getByRole('table', { name: /Body of PUT/ })).toContainText(
		'zones[].coords'
	);
	await expect(page.getByRole('table', { name: 'Error codes' })).toContainText('422');

	for (const theme of ['paper', 'night'] as ThemeName[]) {
		await setTheme(page, theme);
		await expect.poll(() => paintedColours(page)).toEqual(themePalette[theme]);
		await page.screenshot({ path: `test-results/artifacts/api-${theme}.png` });
		await settings.screenshot({ path: `test-results/artifacts/api-${theme}-settings.png` });
	}
});
