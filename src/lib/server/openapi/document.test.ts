import { readdirSync, readFileSync } from 'node:fs';
import { join, relative, resolve } from 'node:path';
import { describe, expect, it } from 'vitest';
import * as metricSettings from '$lib/metrics/settings';
import * as auditValidation from '$lib/validation/audit';
import * as peopleValidation from '$lib/validation/people';
import * as rigsValidation from '$lib/validation/rigs';
import * as runsValidation from '$lib/validation/runs';
import { errorResponse } from '$server/api';
import * as metricsQuery from '$server/metrics/query';
import { apiDocument, apiErrorSchema, openApiPath } from './document';
import { operations } from './operations';

const apiDir = resolve(import.meta.dirname, '../../../routes/api');

/** Every `METHOD route` served under src/routes/api, read from the +server.ts files. */
function servedEndpoints(dir = apiDir): string[] {
	const out: string[] = [];
	for (const entry of readdirSync(dir, { withFileTypes: true })) {
		const path = join(dir, entry.name);
		if (entry.isDirectory()) out.push(...servedEndpoints(path));
		else if (entry.name === '+server.ts') {
			const routeId = '/' + relative(resolve(apiDir, '..'), dir).split(/[\\/]/).join('/');
			const source = readFileSync(path, 'utf8');
			const verbs = source.matchAll(
				/export\s+(?:const|(?:async\s+)?function)\s+(GET|POST|PUT|PATCH|DELETE)\b/g
			);
			for (const [, verb] of verbs) out.push(`${verb} ${openApiPath(routeId)}`);
		}
	}
	return out;
}

const doc = apiDocument('http://127.0.0.1:3000');
const documented = Object.entries(doc.paths).flatMap(([path, ops]) =>
	Object.keys(ops).map((method) => `${method.toUpperCase()} ${path}`)
);

describe('the API document', () => {
	it('lists every endpoint under src/routes/api, and nothing else', () => {
		const served = servedEndpoints();
		expect(served.length).toBeGreaterThan(30);
		expect(
			served.filter((e) => !documented.includes(e)),
			'add them to openapi/operations.ts'
		).toEqual([]);
		expect(
			documented.filter((e) => !served.includes(e)),
			'not served'
		).toEqual([]);
	});

	it('takes each query and body schema from what the endpoint validates with', () => {
		const modules = [
			auditValidation,
			peopleValidation,
			rigsValidation,
			runsValidation,
			metricSettings,
			metricsQuery
		];
		const nameOf = (schema: unknown) =>
			modules.flatMap((m) => Object.entries(m)).find(([, v]) => v === schema)?.[0];
		// the settings endpoint validates through checkSettings, which parses with metricSettingsSchema
		const via: Record<string, string> = { metricSettingsSchema: 'checkSettings' };
		const wrong: string[] = [];
		for (const [routeId, byMethod] of Object.entries(operations)) {
			const file = resolve(apiDir, '..', `.${routeId}`, '+server.ts');
			const source = readFileSync(file, 'utf8');
			for (const [method, op] of Object.entries(byMethod)) {
				for (const schema of [op.query, op.body]) {
					if (!schema) continue;
					const name = nameOf(schema);
					if (!name || !new RegExp(`\\b${via[name] ?? name}\\b`).test(source))
						wrong.push(`${method} ${routeId}: ${name ?? 'a schema from elsewhere'}`);
				}
			}
		}
		expect(wrong).toEqual([]);
	});

	it('documents a query or body wherever an endpoint reads one', () => {
		const missing: string[] = [];
		for (const [routeId, byMethod] of Object.entries(operations)) {
			const source = readFileSync(resolve(apiDir, '..', `.${routeId}`, '+server.ts'), 'utf8');
			const reads = /readQuery\(|readJson\(|safeParse\(|checkSettings\(/.test(source);
			const documents = Object.values(byMethod).some((op) => op.query || op.body);
			if (reads && !documents) missing.push(routeId);
		}
		expect(missing).toEqual([]);
	});

	it('is OpenAPI 3.1 with path parameters, query parameters and bodies from the zod schemas', () => {
		expect(doc.openapi).toBe('3.1.0');
		const frames = doc.paths['/api/runs/{id}/frames'].get!;
		expect(frames.parameters.map((p) => `${p.in}:${p.name}`)).toEqual([
			'path:id',
			'query:from_seq',
			'query:to_seq',
			'query:from',
			'query:to',
			'query:limit'
		]);
		// frameQuery: limit 1..5000, default 500, so not required
		const limit = frames.parameters.find((p) => p.name === 'limit')!;
		expect(limit).toMatchObject({
			required: false,
			schema: { type: 'integer', minimum: 1, maximum: 5000, default: 500 }
		});
		const pin = doc.paths['/api/runs/{id}/pins'].post!.requestBody!.content['application/json'];
		expect(pin.schema).toMatchObject({
			type: 'object',
			required: expect.arrayContaining(['title', 'category', 'severity', 't', 'view'])
		});
		expect(doc.paths['/api/runs/{id}/pins'].post!.responses).toHaveProperty('201');
	});

	it('gives each operation the roles the access rules and the matrix allow', () => {
		expect(doc.paths['/api/runs/{id}/settings'].put!['x-skein-access']).toEqual({
			rule: 'runs:configure',
			roles: ['admin', 'engineer']
		});
		expect(doc.paths['/api/tokens'].get!['x-skein-access'].rule).toBe('signed-in');
		expect(doc.paths['/api/openapi.json'].get!['x-skein-access']).toEqual({
			rule: 'public',
			roles: null
		});
		expect(doc.paths['/api/people'].post!.responses).toHaveProperty('403');
		expect(doc.paths['/api/tokens'].post!.responses).not.toHaveProperty('403');
	});

	it('describes the error shape the endpoints answer with', async () => {
		const res = errorResponse('invalid', 'Some fields are not valid', {
			title: 'give the pin a title'
		});
		expect(res.status).toBe(422);
		expect(apiErrorSchema.safeParse(await res.json()).success).toBe(true);
		expect(doc.components.schemas.Error).toMatchObject({
			properties: { error: { required: ['code', 'message'] } }
		});
	});
});
