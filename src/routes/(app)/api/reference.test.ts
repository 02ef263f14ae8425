import { describe, expect, it } from 'vitest';
import { apiDocument } from '$server/openapi/document';
import { codeSpans, fieldRows, operationsByTag, typeOf } from './reference';

describe('the API page reads the document', () => {
	it('writes JSON Schema as short types', () => {
		expect(typeOf({ type: 'integer', minimum: 1, maximum: 5000, default: 500 })).toBe(
			'integer 1–5000, default 500'
		);
		expect(typeOf({ type: 'integer', minimum: 0, maximum: Number.MAX_SAFE_INTEGER })).toBe(
			'integer ≥0'
		);
		expect(typeOf({ type: 'number', exclusiveMinimum: 0 })).toBe('number >0');
		expect(typeOf({ type: 'string', enum: ['asc', 'desc'], default: 'desc' })).toBe(
			'one of: asc, desc, default "desc"'
		);
		expect(typeOf({ type: ['string', 'null'] })).toBe('string or null');
		expect(typeOf({ type: 'string', maxLength: 80 })).toBe('string ≤80 characters');
		expect(typeOf({ anyOf: [{ type: 'number' }, { type: 'string', pattern: '^\\d+$' }] })).toBe(
			'number or string matching ^\\d+$'
		);
		expect(
			typeOf({ type: 'array', items: { type: 'string', enum: ['a', 'b'] }, maxItems: 4 })
		).toBe('list of one of: a, b (at most 4)');
	});

	it('flattens nested bodies to dotted names', () => {
		const doc = apiDocument('http://x');
		const pin = doc.paths['/api/runs/{id}/pins'].post!.requestBody!.content['application/json'];
		const rows = fieldRows(pin.schema);
		expect(rows.map((r) => r.name)).toContain('view.coords');
		expect(rows.find((r) => r.name === 'title')).toMatchObject({ required: true });
		const settings = doc.paths['/api/runs/{id}/settings'].put!.requestBody!;
		expect(fieldRows(settings.content['application/json'].schema).map((r) => r.name)).toContain(
			'zones[].coords'
		);
	});

	it('groups every operation under its tag, with its error statuses', () => {
		const doc = apiDocument('http://x');
		const groups = operationsByTag(doc);
		const count = Object.values(doc.paths).reduce((n, ops) => n + Object.keys(ops).length, 0);
		expect(groups.flatMap((g) => g.ops)).toHaveLength(count);
		const put = groups.flatMap((g) => g.ops).find((o) => o.anchor === 'putRunsIdSettings')!;
		expect(put.errors).toEqual([
			{ status: '400', code: 'bad_request' },
			{ status: '401', code: 'unauthenticated' },
			{ status: '403', code: 'forbidden' },
			{ status: '404', code: 'not_found' },
			{ status: '422', code: 'invalid' }
		]);
	});

	it('reads backticks as code', () => {
		expect(codeSpans('`{rig, keys}` and `next_from_seq`.')).toEqual([
			{ code: true, text: '{rig, keys}' },
			{ code: false, text: ' and ' },
			{ code: true, text: 'next_from_seq' },
			{ code: false, text: '.' }
		]);
	});
});
