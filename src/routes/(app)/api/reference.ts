/**
 * The API page's reading of the API document: JSON Schema turned into short types people can read, body
 * fields flattened to dotted names, operations grouped by tag.
 */
import type { ApiDocument, ApiOperation } from '$server/openapi/document';

type JsonSchema = Record<string, unknown>;

export interface FieldRow {
	name: string;
	type: string;
	required: boolean;
	description?: string;
}

export interface OperationView {
	method: string;
	path: string;
	anchor: string;
	op: ApiOperation;
	errors: { status: string; code: string }[];
}

const MAX_SAFE = Number.MAX_SAFE_INTEGER;

function range(s: JsonSchema, unit = ''): string {
	const lo = s.minimum ?? s.exclusiveMinimum;
	const hi = s.maximum === MAX_SAFE ? undefined : (s.maximum ?? s.exclusiveMaximum);
	const op = (exclusive: boolean, sign: string) => (exclusive ? sign : `${sign}=`);
	if (lo !== undefined && hi !== undefined) return ` ${lo}–${hi}${unit}`;
	if (lo !== undefined)
		return ` ${op(s.exclusiveMinimum !== undefined, '>')}${lo}${unit}`.replace('>=', '≥');
	if (hi !== undefined)
		return ` ${op(s.exclusiveMaximum !== undefined, '<')}${hi}${unit}`.replace('<=', '≤');
	return '';
}

/** A short readable type: `integer 1–5000, default 500`, `one of: asc, desc`, `string or null`, … */
export function typeOf(schema: JsonSchema): string {
	const base = baseType(schema);
	return schema.default === undefined ? base : `${base}, default ${JSON.stringify(schema.default)}`;
}

function baseType(s: JsonSchema): string {
	if (Array.isArray(s.enum)) return `one of: ${s.enum.join(', ')}`;
	if (s.const !== undefined) return JSON.stringify(s.const);
	for (const key of ['anyOf', 'oneOf'] as const) {
		const options = s[key];
		if (Array.isArray(options)) return options.map((o) => baseType(o as JsonSchema)).join(' or ');
	}
	if (Array.isArray(s.type)) return s.type.join(' or ');
	switch (s.type) {
		case 'string': {
			if (typeof s.format === 'string') return `string (${s.format})`;
			const length =
				s.minLength !== undefined || s.maxLength !== undefined
					? range({ minimum: s.minLength, maximum: s.maxLength }, ' characters')
					: '';
			const pattern = typeof s.pattern === 'string' ? ` matching ${s.pattern}` : '';
			return `string${length}${pattern}`;
		}
		case 'integer':
		case 'number':
			return `${s.type}${range(s)}`;
		case 'boolean':
			return 'true or false';
		case 'array': {
			if (Array.isArray(s.prefixItems))
				return `[${s.prefixItems.map((i) => baseType(i as JsonSchema)).join(', ')}]`;
			const items = s.items ? baseType(s.items as JsonSchema) : 'anything';
			return `list of ${items}${s.maxItems !== undefined ? ` (at most ${s.maxItems})` : ''}`;
		}
		case 'object':
			return s.additionalProperties && !s.properties ? 'map' : 'object';
		default:
			return 'anything';
	}
}

/** The fields of an object schema, nested objects (and lists of objects) as dotted names. */
export function fieldRows(schema: JsonSchema, prefix = ''): FieldRow[] {
	const properties = (schema.properties ?? {}) as Record<string, JsonSchema>;
	const required = (schema.required ?? []) as string[];
	return Object.entries(properties).flatMap(([key, s]) => {
		const name = prefix + key;
		const row: FieldRow = {
			name,
			type: typeOf(s),
			required: required.includes(key),
			...(typeof s.description === 'string' ? { description: s.description } : {})
		};
		const items = s.type === 'array' ? (s.items as JsonSchema | undefined) : undefined;
		if (s.properties) return [row, ...fieldRows(s, `${name}.`)];
		if (items?.properties) return [row, ...fieldRows(items, `${name}[].`)];
		return [row];
	});
}

/** The documented operations by tag, in the document's tag order. */
export function operationsByTag(doc: ApiDocument): { tag: string; ops: OperationView[] }[] {
	const codeOf = (ref: string) => {
		const description = doc.components.responses[ref.split('/').pop()!]?.description ?? '';
		return description.split(':')[0].split(' ')[1] ?? '';
	};
	const all: OperationView[] = Object.entries(doc.paths).flatMap(([path, ops]) =>
		Object.entries(ops).map(([method, op]) => ({
			method: method.toUpperCase(),
			path,
			anchor: op.operationId,
			op,
			errors: Object.entries(op.responses).flatMap(([status, r]) =>
				'$ref' in r ? [{ status, code: codeOf(r.$ref) }] : []
			)
		}))
	);
	return doc.tags
		.map(({ name }) => ({ tag: name, ops: all.filter((o) => o.op.tags[0] === name) }))
		.filter((g) => g.ops.length > 0);
}

/** Splits text at backticks into plain and code pieces (the document writes `code` the Markdown way). */
export function codeSpans(text: string): { code: boolean; text: string }[] {
	return text
		.split('`')
		.map((piece, i) => ({ code: i % 2 === 1, text: piece }))
		.filter((piece) => piece.text !== '');
}
