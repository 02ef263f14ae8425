import { expect } from 'vitest';
import type { Browserish } from '../support/client';

interface Caught {
	to: string[];
	subject: string;
	text: string;
}

/** Waits for a caught mail to `to` (read through the admin-only dev mail API) and returns its first link. */
export async function waitForMail(
	admin: Browserish,
	to: string,
	subject: RegExp
): Promise<{ mail: Caught; link: URL }> {
	const deadline = Date.now() + 10_000;
	for (;;) {
		const res = await admin.json('/api/dev/mail', 'GET');
		expect(res.status).toBe(200);
		const { messages } = (await res.json()) as { messages: Caught[] };
		const mail = messages.find((m) => m.to.includes(to) && subject.test(m.subject));
		if (mail) {
			const href = mail.text.match(/https?:\/\/\S+/)?.[0];
			if (!href) throw new Error(`mail to ${to} has no link:\n${mail.text}`);
			return { mail, link: new URL(href) };
		}
		if (Date.now() > deadline) throw new Error(`no mail to ${to} matching ${subject}`);
		await new Promise((r) => setTimeout(r, 100));
	}
}
