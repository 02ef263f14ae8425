/**
 * Security headers on every kind of answer (issue 11, finding 10): pages carry the page policy from `kit.csp`,
 * everything else (API, static files, redirects, errors) a policy that loads nothing; none may be framed.
 */
import { beforeAll, describe, expect, inject, it } from 'vitest';
import { Browserish } from '../support/client';
import { makePerson } from '../support/factories';

let base: string;
let viewer: Browserish;

beforeAll(async () => {
	base = inject('appUrl');
	const p = await makePerson('viewer', 'headers');
	viewer = new Browserish(base);
	await viewer.signIn(p.email, p.password);
});

function directives(policy: string | null): Map<string, string[]> {
	const out = new Map<string, string[]>();
	for (const part of (policy ?? '').split(';')) {
		const [name, ...values] = part.trim().split(/\s+/);
		if (name) out.set(name, values);
	}
	return out;
}

function expectCommon(res: Response, what: string) {
	expect(res.headers.get('x-content-type-options'), what).toBe('nosniff');
	expect(res.headers.get('x-frame-options'), what).toBe('DENY');
	expect(res.headers.get('referrer-policy'), what).toBe('same-origin');
	const csp = directives(res.headers.get('content-security-policy'));
	expect(csp.get('frame-ancestors'), what).toEqual(["'none'"]);
	return csp;
}

describe('pages', () => {
	it.each([
		['/sign-in', 'anonymous'],
		['/settings', 'viewer'],
		['/runs', 'viewer'],
		['/about', 'anonymous']
	])('%s (%s) carries the page policy', async (path, who) => {
		const c = who === 'viewer' ? viewer : new Browserish(base);
		const res = await c.get(path);
		expect(res.status).toBe(200);
		const csp = expectCommon(res, path);
		const html = await res.text();
		// scripts: this origin, or SvelteKit's inline start-up script with this answer's nonce; never eval
		const scripts = csp.get('script-src')!;
		expect(scripts).toContain("'self'");
		expect(scripts.join(' ')).not.toMatch(/unsafe-inline|unsafe-eval/);
		const nonce = scripts.find((s) => s.startsWith("'nonce-"))!.slice(7, -1);
		const inline = [...html.matchAll(/<script(?![^>]*\bsrc=)([^>]*)>/g)];
		expect(inline.length).toBeGreaterThan(0);
		for (const [, attrs] of inline) expect(attrs).toContain(`nonce="${nonce}"`);
		expect(csp.get('default-src')).toEqual(["'self'"]);
		expect(csp.get('object-src')).toEqual(["'none'"]);
		expect(csp.get('connect-src')).toEqual(["'self'"]);
	});

	it('gives each answer its own nonce', async () => {
		const nonceOf = async () =>
			directives((await viewer.get('/runs')).headers.get('content-security-policy'))
				.get('script-src')!
				.find((s) => s.startsWith("'nonce-"));
		expect(await nonceOf()).not.toBe(await nonceOf());
	});

	it('error pages and redirects carry the headers too', async () => {
		expectCommon(await viewer.get('/no-such-page'), '404 page');
		expectCommon(await viewer.get('/people'), '403 page');
		const redirect = await new Browserish(base).get('/settings');
		expect(redirect.status).toBe(303);
		expectCommon(redirect, 'redirect to sign-in');
	});
});

describe('everything else', () => {
	it.each([
		['/api/me', 'viewer', 200],
		['/api/me', 'anonymous', 401],
		['/api/runs?limit=0', 'viewer', 422],
		['/api/people', 'viewer', 403],
		['/healthz', 'anonymous', 200],
		['/favicon.svg', 'anonymous', 200]
	])('%s (%s, %i) carries a policy that loads nothing', async (path, who, status) => {
		const c = who === 'viewer' ? viewer : new Browserish(base);
		const res = await c.get(path, { accept: 'application/json' });
		expect(res.status).toBe(status);
		const csp = expectCommon(res, path);
		expect(csp.get('default-src')).toEqual(["'none'"]);
	});

	it('static scripts of the app are served with nosniff', async () => {
		const html = await (await viewer.get('/runs')).text();
		const script = html.match(/import\("([^"]+\.js)"\)/)![1];
		const res = await fetch(new URL(script, base + '/runs'));
		expect(res.status).toBe(200);
		expect(res.headers.get('x-content-type-options')).toBe('nosniff');
	});
});
