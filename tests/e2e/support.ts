/** Helpers shared by the end-to-end specs. */
import { expect, test as base, type Locator, type Page } from '@playwright/test';
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

export type ThemeName = 'paper' | 'night';

/** The page, panel and text colours of each theme (shared/DESIGN.md, "Look"), as computed styles give them. */
export const themePalette: Record<ThemeName, { page: string; panel: string; ink: string }> = {
	paper: { page: 'rgb(246, 244, 238)', panel: 'rgb(255, 255, 255)', ink: 'rgb(28, 34, 48)' },
	night: { page: 'rgb(18, 21, 28)', panel: 'rgb(25, 29, 38)', ink: 'rgb(231, 229, 223)' }
};

/** Switches the theme in the page, as the Settings choice does on the next load. */
export async function setTheme(page: Page, theme: ThemeName) {
	await page.evaluate((t) => (document.documentElement.dataset.theme = t), theme);
}

/** The colours the page actually paints: its background, the first panel's background and the text. */
export async function paintedColours(page: Page) {
	return page.evaluate(() => {
		const root = getComputedStyle(document.documentElement);
		const panel = document.querySelector('.panel');
		return {
			page: root.backgroundColor,
			panel: panel ? getComputedStyle(panel).backgroundColor : null,
			ink: root.color
		};
	});
}

/**
 * What an element shows on screen, from its screenshot decoded in the page: the most common colour and its
 * share of the pixels, and how many pixels lie near each of the given colours (`#RRGGBB`).
 */
export async function screenPixels(
	page: Page,
	element: Locator,
	near: Record<string, string> = {}
): Promise<{ dominant: string; dominantShare: number; near: Record<string, number> }> {
	const png = (await element.screenshot()).toString('base64');
	return page.evaluate(
		async ({ png, near }) => {
			const img = new Image();
			img.src = `data:image/png;base64,${png}`;
			await img.decode();
			const canvas = new OffscreenCanvas(img.width, img.height);
			const ctx = canvas.getContext('2d')!;
			ctx.drawImage(img, 0, 0);
			const { data } = ctx.getImageData(0, 0, img.width, img.height);
			const targets = Object.entries(near).map(([name, hex]) => {
				const n = Number.parseInt(hex.slice(1), 16);
				return { name, rgb: [(n >> 16) & 255, (n >> 8) & 255, n & 255] };
			});
			const counts = new Map<number, number>();
			const hits: Record<string, number> = Object.fromEntries(targets.map((t) => [t.name, 0]));
			for (let i = 0; i < data.length; i += 4) {
				const key = (data[i] << 16) | (data[i + 1] << 8) | data[i + 2];
				counts.set(key, (counts.get(key) ?? 0) + 1);
				for (const t of targets) {
					const d =
						Math.abs(data[i] - t.rgb[0]) +
						Math.abs(data[i + 1] - t.rgb[1]) +
						Math.abs(data[i + 2] - t.rgb[2]);
					if (d <= 60) hits[t.name] += 1;
				}
			}
			let best = 0;
			let bestCount = 0;
			for (const [key, count] of counts) if (count > bestCount) [best, bestCount] = [key, count];
			return {
				dominant: `rgb(${(best >> 16) & 255}, ${(best >> 8) & 255}, ${best & 255})`,
				dominantShare: bestCount / (data.length / 4),
				near: hits
			};
		},
		{ png, near }
	);
}
