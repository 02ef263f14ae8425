/** Helpers shared by the end-to-end specs. */
import { expect, test as base, type Page } from '@playwright/test';
import postgres from 'postgres';
import { hashSecret, newSecret, secretPrefix } from '../../src/lib/server/auth/tokens';

/**
 * Playwright's `test`, with every page watched for Content-Security-Policy violations (the browser's
 * `securitypolicyviolation` events and its console reports): a test fails if the page policy blocked anything.
 */
export const test = base.extend<{ cspWatch: void }>({
	cspWatch: [
		async ({ page }, use) => {
			const violations: string[] = [];
			page.on('console', (m) => {
				if (/Content Security Policy|Refused to/i.test(m.text())) violations.push(m.text());
			});
			await page.exposeFunction('__skeinCspViolation', (v: string) => violations.push(v));
			await page.addInitScript(() => {
				document.addEventListener('securitypolicyviolation', (e) => {
					const report = (window as unknown as { __skeinCspViolation(v: string): void })
						.__skeinCspViolation;
					report(
						`${e.violatedDirective} blocked ${e.blockedURI || 'inline'} (${e.sourceFile}:${e.lineNumber})`
					);
				});
			});
			await use();
			expect(violations, 'Content-Security-Policy violations').toEqual([]);
		},
		{ auto: true }
	]
});
export { expect };

export const demoPassword = 'skein-demo-admin';
export const admin = { email: 'admin@skein.test', password: demoPassword };
export const viewer = { email: 'ruben.alsaker@skein.test', password: demoPassword };

/** A rig and feed key made straight in the e2e database, as tests/support/rigs.ts does for integration tests. */
export async function makeRigWithKey(tag: string) {
	const sql = postgres(process.env.DATABASE_URL!, { max: 1, onnotice: () => {} });
	try {
		const name = `${tag}-${Date.now().toString(36)}`;
		const [rig] = await sql<
			{ id: string }[]
		>`insert into rigs (name) values (${name}) returning id`;
		const secret = newSecret('skf');
		await sql`insert into feed_keys (rig_id, label, prefix, key_hash) values (${rig.id}, 'e2e', ${secretPrefix(secret)}, ${hashSecret(secret)})`;
		return { name, secret };
	} finally {
		await sql.end();
	}
}

export async function signIn(page: Page, who: { email: string; password: string }) {
	await page.goto('/sign-in');
	await page.getByLabel('E-mail').fill(who.email);
	await page.getByLabel('Password').fill(who.password);
	await page.getByRole('button', { name: 'Sign in' }).click();
	await expect(page.getByTestId('whoami')).toBeVisible();
}
