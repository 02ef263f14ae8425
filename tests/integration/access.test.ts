/**
 * Walks every route under src/routes and the permission matrix: each route has an access rule, and for
 * every role (and anonymous) each method is refused exactly where the matrix says so.
 */
import { readdirSync, readFileSync, statSync } from 'node:fs';
import { join, relative, resolve } from 'node:path';
import { beforeAll, describe, expect, inject, it } from 'vitest';
import { actions, can, roles, type Role } from '$lib/permissions';
import { routeRules, type Rule } from '$server/access';
import { Browserish } from '../support/client';
import { makePerson } from '../support/factories';

const routesDir = resolve(import.meta.dirname, '../../src/routes');

interface RouteFile {
	id: string;
	kind: 'page' | 'endpoint';
	methods: string[];
	actions: string[];
}

const httpMethods = ['GET', 'POST', 'PUT', 'PATCH', 'DELETE', 'OPTIONS'];
const declared = /export\s+(?:const|let|var|(?:async\s+)?function\*?)\s+([A-Z]+)\b/g;
const listed = /export\s*\{([^}]*)\}/g;

/** The HTTP methods a +server.ts exports, in any of the forms TypeScript allows. */
function exportedMethods(src: string): string[] {
	const names = [...src.matchAll(declared)].map((m) => m[1]);
	for (const [, list] of src.matchAll(listed))
		for (const item of list.split(','))
			names.push(
				item
					.trim()
					.split(/\s+as\s+/)
					.at(-1)!
					.trim()
			);
	return [...new Set(names.filter((n) => httpMethods.includes(n)))];
}

function walk(dir: string): RouteFile[] {
	const out: RouteFile[] = [];
	const files = readdirSync(dir);
	const id = '/' + relative(routesDir, dir).split('/').filter(Boolean).join('/');
	const routeId = id === '/' ? '/' : id;
	if (files.includes('+server.ts')) {
		const src = readFileSync(join(dir, '+server.ts'), 'utf8');
		const methods = exportedMethods(src);
		out.push({ id: routeId, kind: 'endpoint', methods, actions: [] });
	}
	if (files.includes('+page.svelte')) {
		const server = files.includes('+page.server.ts')
			? readFileSync(join(dir, '+page.server.ts'), 'utf8')
			: '';
		const block = server.split('export const actions')[1] ?? '';
		const actions = [...block.matchAll(/^\t(\w+): async/gm)].map((m) => m[1]);
		out.push({ id: routeId, kind: 'page', methods: ['GET'], actions });
	}
	for (const f of files) {
		const p = join(dir, f);
		if (statSync(p).isDirectory()) out.push(...walk(p));
	}
	return out;
}

const routes = walk(routesDir);

function concretePath(id: string): string {
	return (
		id
			.split('/')
			.filter((s) => !(s.startsWith('(') && s.endsWith(')')))
			.join('/')
			.replace('[token=token]', 'ski_' + 'A'.repeat(32))
			.replace('[id=id]', 'A'.repeat(20)) || '/'
	);
}

function expected(
	rule: Rule | undefined,
	role: Role | null
): 'allowed' | 'anonymous' | 'forbidden' | 'unroutable' {
	if (rule === undefined) return 'unroutable';
	if (rule === 'public') return 'allowed';
	if (role === null) return 'anonymous';
	if (rule === 'signed-in' || can(role, rule)) return 'allowed';
	return 'forbidden';
}

describe('the route walker', () => {
	it.each([
		['export const GET: RequestHandler = endpoint(async () => json({}));', ['GET']],
		['export function GET() {}\nexport async function POST() {}', ['GET', 'POST']],
		['export let PATCH = handler;', ['PATCH']],
		['const get = () => x;\nexport { get as GET, put as PUT };', ['GET', 'PUT']],
		['export { DELETE } from "./shared";', ['DELETE']],
		['// export const GETTER\nexport const config = {};', []]
	])('finds the methods of %j', (src, want) => {
		expect(exportedMethods(src).sort()).toEqual([...want].sort());
	});
});

describe('every route has an access rule', () => {
	it('found the routes', () => {
		expect(routes.length).toBeGreaterThan(20);
	});
	it.each(routes.map((r) => [r.id, r]))('%s', (_id, route) => {
		expect(routeRules[route.id], `add ${route.id} to src/lib/server/access.ts`).toBeDefined();
		const rule = routeRules[route.id];
		if (route.kind === 'page' && route.actions.length > 0) {
			for (const action of route.actions) {
				const write = rule.write;
				const r = typeof write === 'string' ? write : write?.[action];
				expect(r, `${route.id} action ${action} has no rule`).toBeDefined();
			}
		}
		if (route.kind === 'endpoint' && route.methods.some((m) => m !== 'GET')) {
			expect(rule.write, `${route.id} writes but has no write rule`).toBeDefined();
		}
	});
});

describe('every action of the matrix is enforced somewhere', () => {
	const enforced = new Set<string>();
	for (const rule of Object.values(routeRules)) {
		enforced.add(rule.read);
		if (typeof rule.write === 'string') enforced.add(rule.write);
		else for (const r of Object.values(rule.write ?? {})) enforced.add(r);
	}
	it.each([...actions])('%s guards at least one route', (action) => {
		expect(
			enforced.has(action),
			`${action} is defined in src/lib/permissions.ts but no route in src/lib/server/access.ts requires it`
		).toBe(true);
	});
});

describe('the matrix holds over HTTP', () => {
	const clients = new Map<Role | null, Browserish>();

	beforeAll(async () => {
		const base = inject('appUrl');
		clients.set(null, new Browserish(base));
		for (const role of roles) {
			const p = await makePerson(role, `matrix-${role}`);
			const c = new Browserish(base);
			await c.signIn(p.email, p.password);
			expect(c.cookies.has('skein_session'), `${role} signed in`).toBe(true);
			clients.set(role, c);
		}
	});

	const cases: [string, string, string, string][] = [];
	for (const r of routes) {
		if (r.id === '/(auth)/sign-out') continue; // signing out would end the client's session mid-walk
		for (const m of r.methods) cases.push([r.id, m, '', r.kind]);
		for (const a of r.actions) cases.push([r.id, 'POST', a, r.kind]);
	}

	it.each(cases)('%s %s %s', async (id, method, action, kind) => {
		const path = concretePath(id);
		const search = action ? (action === 'default' ? '' : `?/${action}`) : '';
		const rule =
			method === 'GET'
				? routeRules[id].read
				: typeof routeRules[id].write === 'string'
					? (routeRules[id].write as Rule)
					: (routeRules[id].write as Record<string, Rule> | undefined)?.[action || 'default'];
		for (const role of [null, ...roles] as (Role | null)[]) {
			const c = clients.get(role)!;
			const res =
				kind === 'page' && method === 'POST'
					? await c.postForm(path + search, {})
					: method === 'GET'
						? await c.get(path, kind === 'endpoint' ? { accept: 'application/json' } : {})
						: await c.json(path, method, {});
			const want = expected(rule, role);
			const who = role ?? 'anonymous';
			if (want === 'anonymous') {
				if (kind === 'endpoint') expect(res.status, `${who} ${method} ${path}`).toBe(401);
				else {
					expect(res.status, `${who} ${method} ${path}`).toBe(303);
					expect(res.headers.get('location')).toMatch(/^\/sign-in\?next=/);
				}
			} else if (want === 'forbidden') {
				expect(res.status, `${who} ${method} ${path}${search}`).toBe(403);
			} else {
				expect([401, 403], `${who} ${method} ${path}${search} should pass the guard`).not.toContain(
					res.status
				);
				// an allowed request with junk input gets a 4xx, never a crash that would hide a missing check
				expect(
					res.status,
					`${who} ${method} ${path}${search} answered a server error`
				).toBeLessThan(500);
			}
		}
	});
});
