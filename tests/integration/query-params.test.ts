/**
 * Every query parameter of every list endpoint, given values that once reached PostgreSQL and failed there (a
 * NUL in text, year 0000, numbers past any range, a parameter given twice, broken percent-encoding): each is
 * either taken or refused with a 422 naming the parameter; none gives a 5xx (issue 11, finding 11).
 */
import { readdirSync, readFileSync, statSync } from 'node:fs';
import { join, relative, resolve } from 'node:path';
import { beforeAll, describe, expect, inject, it } from 'vitest';
import { listQueries, pageQueries } from '$lib/validation/queries';
import { Browserish } from '../support/client';
import { makePerson } from '../support/factories';
import { streamRun } from '../support/rigs';

const routesDir = resolve(import.meta.dirname, '../../src/routes');

/** Route ids whose server file reads the query string. */
function routesReadingQuery(dir: string, found: Map<string, string> = new Map()) {
	for (const f of readdirSync(dir)) {
		const p = join(dir, f);
		if (statSync(p).isDirectory()) routesReadingQuery(p, found);
		else if (f === '+server.ts' || f === '+page.server.ts') {
			const src = readFileSync(p, 'utf8');
			if (/searchParams|readQuery|checkQuery/.test(src)) {
				const id = '/' + relative(routesDir, dir).split('/').filter(Boolean).join('/');
				found.set(id, f);
			}
		}
	}
	return found;
}

/** Raw query-string values (already encoded), each one a kind of input that broke an endpoint once. */
const badValues: [string, string][] = [
	['NUL', 'a%00b'],
	['NUL alone', '%00'],
	['other control character', 'a%01b'],
	['year 0000', '0000-01-01'],
	['year 0000 with time', '0000-01-01T00:00:00Z'],
	['year 99999', '99999-01-01'],
	['huge integer', '9'.repeat(30)],
	['huge float', '1e308'],
	['overflowing float', '1e400'],
	['negative huge', '-1e300'],
	['past the safe integer', '9007199254740993'],
	['negative', '-1'],
	['fraction', '0.5'],
	['NaN', 'NaN'],
	['Infinity', 'Infinity'],
	['hex', '0x7fffffffffffffff'],
	['empty', ''],
	['very long', 'x'.repeat(5000)],
	['broken percent-encoding', '%E0%A4%A'],
	['lone percent', '%'],
	['invalid UTF-8 bytes', '%FF%FE'],
	['an encoded surrogate', '%ED%A0%80'],
	['brackets', '[]'],
	['JSON array', '%5B1%2C2%5D']
];

let admin: Browserish;
let runId: string;

beforeAll(async () => {
	const base = inject('appUrl');
	const p = await makePerson('admin', 'query-walker');
	admin = new Browserish(base);
	await admin.signIn(p.email, p.password);
	// a real run, so that values the schemas take reach the SQL behind each endpoint
	runId = await streamRun(
		base,
		'query walk',
		Array.from({ length: 5 }, (_, k) => ({
			t: 1_790_300_000 + k * 0.1,
			measurements: [{ z: [k, 1] }],
			estimates: [{ id: 'a', x: [k, 1.2], r: 0.9 }],
			truth: [{ id: 'T', x: [k, 1] }]
		}))
	);
});

const concrete = (id: string) =>
	id
		.split('/')
		.filter((s) => !(s.startsWith('(') && s.endsWith(')')))
		.join('/')
		.replace('[id=id]', runId);

interface ErrorBody {
	error?: { code: string; message: string; details?: Record<string, string> };
}

/** Routes that read the query string without a schema, and why that is safe. */
const unlisted: Record<string, string> = {
	'/(auth)/sign-in': 'reads only `next`, which safeNext resolves or drops (security.test.ts)'
};

describe('the walk covers every route that reads its query string', () => {
	const routes = [...routesReadingQuery(routesDir)].filter(([id]) => !(id in unlisted));
	it.each(routes)('%s (%s) has its schema listed', (id, file) => {
		const listed = file === '+server.ts' ? listQueries : pageQueries;
		expect(
			Object.keys(listed),
			`add ${id} to src/lib/validation/queries.ts (and validate with its schema)`
		).toContain(id);
	});
});

describe('list endpoints', () => {
	const cases: [string, string, string, string][] = [];
	for (const [route, schema] of Object.entries(listQueries))
		for (const param of Object.keys(schema.shape))
			for (const [kind, value] of badValues) cases.push([route, param, kind, value]);

	it.each(cases)('%s ?%s= %s', async (route, param, _kind, value) => {
		const res = await admin.json(`${concrete(route)}?${param}=${value}`, 'GET');
		const body = await res.text();
		expect(res.status, body.slice(0, 300)).toBeLessThan(500);
		if (res.status >= 400) {
			expect(res.status, body.slice(0, 300)).toBe(422);
			const err = (JSON.parse(body) as ErrorBody).error!;
			expect(err.code).toBe('invalid');
			expect(Object.keys(err.details ?? {}), err.message).toContain(param);
			expect(err.message).toContain(param);
		}
	});

	it.each(Object.entries(listQueries).flatMap(([r, s]) => Object.keys(s.shape).map((p) => [r, p])))(
		'%s refuses ?%s given twice',
		async (route, param) => {
			const res = await admin.json(`${concrete(route)}?${param}=1&${param}=2`, 'GET');
			expect(res.status).toBe(422);
			const err = ((await res.json()) as ErrorBody).error!;
			expect(err.details?.[param]).toBe(`${param} must be given once`);
		}
	);

	it.each([
		['q', 'a%00b', 'q must not contain control characters'],
		['tag', 'a%00b', 'tag must not contain control characters'],
		['since', '0000-01-01', 'since must be a date in the years 0001 to 9999'],
		['until', '0000-12-31', 'until must be a date in the years 0001 to 9999']
	])('/api/runs ?%s=%s: 422 naming the field', async (param, value, message) => {
		const res = await admin.json(`/api/runs?${param}=${value}`, 'GET');
		expect(res.status).toBe(422);
		const details = ((await res.json()) as ErrorBody).error!.details!;
		expect(Object.keys(details)).toEqual([param]);
		expect(details[param]).toContain(message);
	});
});

describe('pages', () => {
	it.each([
		['/runs', 'q', 'a%00b'],
		['/runs', 'tag', '%00'],
		['/runs', 'since', '0000-01-01'],
		['/runs', 'until', '0000-01-01'],
		['/settings/audit', 'before', '9'.repeat(30)],
		['/settings/audit', 'before', '%00']
	])('%s ?%s=%s: 400 naming the field', async (page, param, value) => {
		const res = await admin.get(`${page}?${param}=${value}`);
		expect(res.status).toBe(400);
		expect(await res.text()).toContain(`${param} must`);
	});

	it.each(Object.entries(pageQueries).flatMap(([r, s]) => Object.keys(s.shape).map((p) => [r, p])))(
		'%s ?%s= every bad value: never a 5xx',
		async (route, param) => {
			for (const [kind, value] of badValues) {
				const res = await admin.get(`${concrete(route)}?${param}=${value}`);
				expect(res.status, `${kind}: ${value}`).toBeLessThan(500);
			}
		}
	);
});
