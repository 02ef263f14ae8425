/**
 * The API document (OpenAPI 3.1), served at /api/openapi.json and read by the API page. Parameters and
 * bodies are zod 4's JSON Schema of the endpoints' own schemas (input side: what a caller sends); each
 * operation's access comes from src/lib/server/access.ts and the permission matrix, as the guard enforces it.
 */
import { z } from 'zod';
import { can, roles, type Role } from '$lib/permissions';
import { idParam } from '$lib/validation/ids';
import { routeRules, type Rule } from '$server/access';
import { statusOf, type ErrorCode } from '$server/api';
import { sessionCookieName } from '$server/auth/sessions';
import { methods, operations, tags, type Method, type Operation } from './operations';

type JsonSchema = Record<string, unknown>;

export interface Access {
	/** 'public', 'signed-in' or the action of the permission matrix */
	rule: Rule;
	/** the roles that pass; null when anyone passes, signed in or not */
	roles: Role[] | null;
}

export interface ApiParameter {
	name: string;
	in: 'path' | 'query';
	required: boolean;
	schema: JsonSchema;
	description?: string;
}

export interface ApiOperation {
	operationId: string;
	tags: string[];
	summary: string;
	description?: string;
	parameters: ApiParameter[];
	requestBody?: { required: true; content: { 'application/json': { schema: JsonSchema } } };
	responses: Record<
		string,
		{ description: string; content?: Record<string, unknown> } | { $ref: string }
	>;
	security: Record<string, string[]>[];
	'x-skein-access': Access;
}

export interface ApiDocument {
	openapi: '3.1.0';
	info: { title: string; version: string; description: string };
	servers: { url: string }[];
	tags: { name: string }[];
	paths: Record<string, Partial<Record<Method, ApiOperation>>>;
	/** each error code with its HTTP status */
	'x-skein-errors': Record<ErrorCode, number>;
	components: {
		schemas: { Error: JsonSchema };
		responses: Record<string, { description: string; content: Record<string, unknown> }>;
		securitySchemes: Record<string, Record<string, string>>;
	};
}

const errorCodes = Object.keys(statusOf) as ErrorCode[];

/** The one error shape of every API route (src/lib/server/api.ts). */
export const apiErrorSchema = z.object({
	error: z.object({
		code: z.enum(errorCodes),
		message: z.string().meta({ description: 'a sentence for people' }),
		details: z
			.record(z.string(), z.string())
			.optional()
			.meta({ description: 'one message per field or parameter, by name (`zones.0.x`, …)' })
	})
});

function jsonSchema(schema: z.ZodType): JsonSchema {
	const { $schema: _dialect, ...rest } = z.toJSONSchema(schema, {
		io: 'input',
		unrepresentable: 'any'
	});
	return rest;
}

/** `/api/runs/[id=id]/frames` → `/api/runs/{id}/frames` */
export function openApiPath(routeId: string): string {
	return routeId.replace(/\[(\w+)(?:=\w+)?\]/g, '{$1}');
}

export function accessOf(rule: Rule): Access {
	if (rule === 'public') return { rule, roles: null };
	if (rule === 'signed-in') return { rule, roles: [...roles] };
	return { rule, roles: roles.filter((r) => can(r, rule)) };
}

function ruleOf(routeId: string, method: Method): Rule | undefined {
	const entry = routeRules[routeId];
	if (!entry) return undefined;
	if (method === 'get') return entry.read;
	const write = entry.write;
	return typeof write === 'string' ? write : write?.default;
}

function queryParameters(schema: z.ZodType): ApiParameter[] {
	const s = jsonSchema(schema) as {
		properties?: Record<string, JsonSchema>;
		required?: string[];
	};
	return Object.entries(s.properties ?? {}).map(([name, property]) => {
		const { description, ...rest } = property as JsonSchema & { description?: string };
		return {
			name,
			in: 'query' as const,
			required: s.required?.includes(name) ?? false,
			schema: rest,
			...(description ? { description } : {})
		};
	});
}

function pathParameters(routeId: string): ApiParameter[] {
	const { description, ...schema } = jsonSchema(idParam) as JsonSchema & { description?: string };
	return [...routeId.matchAll(/\[(\w+)(?:=(\w+))?\]/g)].map((m) => {
		if (m[2] !== 'id')
			throw new Error(`describe the route parameter ${m[0]} in openapi/document.ts`);
		return { name: m[1], in: 'path', required: true, schema, description: description as string };
	});
}

const errorRef = (description: string) => ({ $ref: `#/components/responses/${description}` });

function responses(routeId: string, op: Operation, access: Access): ApiOperation['responses'] {
	const status = op.status ?? 200;
	const content: Record<string, unknown> = {};
	if (status !== 204) {
		content['application/json'] = {};
		for (const type of op.alsoAs ?? []) content[type] = {};
	}
	const out: ApiOperation['responses'] = {
		[status]: { description: op.answers, ...(status === 204 ? {} : { content }) }
	};
	if (op.body) out[400] = errorRef('BadRequest');
	if (access.roles !== null) {
		out[401] = errorRef('Unauthenticated');
		if (access.roles.length < roles.length) out[403] = errorRef('Forbidden');
	}
	if (routeId.includes('[') || routeId === '/api/dev/mail') out[404] = errorRef('NotFound');
	if (op.query || op.body) out[422] = errorRef('Invalid');
	return out;
}

function operation(routeId: string, method: Method, op: Operation): ApiOperation {
	const rule = ruleOf(routeId, method);
	if (rule === undefined) throw new Error(`${method.toUpperCase()} ${routeId} has no access rule`);
	const access = accessOf(rule);
	return {
		operationId: `${method}${openApiPath(routeId)
			.replace(/^\/api/, '')
			.replace(/[{}.]/g, '')
			.split(/[/_-]/)
			.map((w) => w.charAt(0).toUpperCase() + w.slice(1))
			.join('')}`,
		tags: [op.tag],
		summary: op.summary,
		...(op.description ? { description: op.description } : {}),
		parameters: [...pathParameters(routeId), ...(op.query ? queryParameters(op.query) : [])],
		...(op.body
			? {
					requestBody: {
						required: true as const,
						content: { 'application/json': { schema: jsonSchema(op.body) } }
					}
				}
			: {}),
		responses: responses(routeId, op, access),
		security: access.roles === null ? [] : [{ session: [] }, { token: [] }],
		'x-skein-access': access
	};
}

const errorResponses: Record<string, [ErrorCode, string]> = {
	BadRequest: ['bad_request', 'The body is not JSON'],
	Unauthenticated: ['unauthenticated', 'Not signed in and no valid token'],
	Forbidden: ['forbidden', 'Your role may not do this'],
	NotFound: ['not_found', 'No such thing'],
	Invalid: ['invalid', 'Some fields or parameters are not valid; `details` names each one']
};

export function apiDocument(origin: string): ApiDocument {
	const paths: ApiDocument['paths'] = {};
	for (const [routeId, byMethod] of Object.entries(operations)) {
		const path = (paths[openApiPath(routeId)] = {} as Partial<Record<Method, ApiOperation>>);
		for (const method of methods) {
			const op = byMethod[method];
			if (op) path[method] = operation(routeId, method, op);
		}
	}
	const error = { 'application/json': { schema: { $ref: '#/components/schemas/Error' } } };
	return {
		openapi: '3.1.0',
		info: {
			title: 'Skein API',
			version: '1',
			description:
				'JSON over HTTP for scripts and client-side fetching. Every error answers in one shape, ' +
				'`{error: {code, message, details?}}`, with the status of its code: ' +
				errorCodes.map((c) => `${c} ${statusOf[c]}`).join(', ') +
				'. Rigs stream over the ingest socket instead (docs/protocol.md).'
		},
		servers: [{ url: origin }],
		tags: tags.map((name) => ({ name })),
		paths,
		'x-skein-errors': statusOf,
		components: {
			schemas: { Error: jsonSchema(apiErrorSchema) },
			responses: Object.fromEntries(
				Object.entries(errorResponses).map(([name, [code, description]]) => [
					name,
					{ description: `${statusOf[code]} ${code}: ${description}`, content: error }
				])
			),
			securitySchemes: {
				session: { type: 'apiKey', in: 'cookie', name: sessionCookieName },
				token: {
					type: 'http',
					scheme: 'bearer',
					description:
						'a personal API token (Settings → API tokens, or `npm run cli -- tokens create`)'
				}
			}
		}
	};
}
