import type { Page } from '@playwright/test';
import { expect, test } from './support';

const admin = { email: 'admin@skein.test', password: 'skein-demo-admin' };

async function signIn(page: Page, email: string, password: string) {
	await page.goto('/sign-in');
	await page.getByLabel('E-mail').fill(email);
	await page.getByLabel('Password').fill(password);
	await page.getByRole('button', { name: 'Sign in' }).click();
	await expect(page.getByTestId('whoami')).toBeVisible();
}

async function signOut(page: Page) {
	await page.getByRole('button', { name: 'Sign out' }).click();
	await expect(page).toHaveURL(/\/sign-in/);
}

test('sign in, invite a person through the mail catcher, sign in as them, sign out', async ({
	page
}) => {
	await signIn(page, admin.email, admin.password);
	await expect(page.getByRole('heading', { name: 'Runs', exact: true })).toBeVisible();

	const email = `e2e-${Date.now()}@example.test`;
	await page.getByRole('link', { name: 'People' }).click();
	const invite = page.locator('form[action="?/invite"]');
	await invite.getByLabel('E-mail').fill('someone@nowhere');
	await invite.getByRole('button', { name: 'Send invite' }).click();
	await expect(page.locator('[data-field-error="email"]')).toContainText('valid e-mail');
	await invite.getByLabel('E-mail').fill(email);
	await invite.getByLabel('Role').selectOption('viewer');
	await invite.getByRole('button', { name: 'Send invite' }).click();
	await expect(page.getByRole('status')).toContainText(`Invite sent to ${email}`);

	await page.getByRole('link', { name: 'Caught mail' }).click();
	const mail = page.getByTestId('caught-mail').filter({ hasText: email }).first();
	await expect(mail).toContainText('You are invited to Skein');
	const link = (await mail.locator('pre').innerText()).match(/https?:\/\/\S+/)![0];
	await signOut(page);

	await page.goto(link);
	await page.getByLabel('Your name').fill('Noor Testwell');
	await page.getByLabel('Password', { exact: true }).fill('viewer-password-1');
	await page.getByLabel('Repeat it').fill('viewer-password-1');
	await page.getByRole('button', { name: 'Create my account' }).click();
	await expect(page.getByTestId('whoami')).toHaveText('Noor Testwell · viewer');
	await signOut(page);

	await signIn(page, email, 'viewer-password-1');
	await signOut(page);
});

test('a viewer is denied an admin page', async ({ page }) => {
	await signIn(page, 'ruben.alsaker@skein.test', admin.password);
	await expect(page.getByRole('link', { name: 'People' })).toHaveCount(0);
	const res = await page.goto('/settings/audit');
	expect(res?.status()).toBe(403);
	await expect(page.locator('body')).toContainText('may not do this');
});

test('people table sorts and filters', async ({ page }) => {
	await signIn(page, admin.email, admin.password);
	await page.goto('/people');
	const rows = page.getByTestId('people-table').locator('tbody tr');
	await page.getByTestId('people-filter').fill('castellan');
	await expect(rows).toHaveCount(1);
	await expect(rows.first()).toContainText('Mei Castellan');
	await page.getByTestId('people-filter').fill('');
	await page.getByRole('button', { name: /^Name/ }).click();
	const names = await rows.locator('td:first-child').allInnerTexts();
	expect(names).toEqual([...names].sort((a, b) => (a < b ? -1 : a > b ? 1 : 0)));
});

test('the about page carries the safety note; both themes render', async ({ page }) => {
	await page.goto('/about');
	await expect(page.locator('[data-safety-note]')).toContainText('not a safety system');
	await signIn(page, admin.email, admin.password);
	await page.goto('/settings');
	await page.screenshot({ path: 'test-results/artifacts/settings-paper.png' });
	await page.getByLabel(/Night/).check();
	await page.getByRole('button', { name: 'Use this theme' }).click();
	await expect(page.locator('html')).toHaveAttribute('data-theme', 'night');
	await page.screenshot({ path: 'test-results/artifacts/settings-night.png' });
});
