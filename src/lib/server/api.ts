import { json } from '@sveltejs/kit';
import type { z } from 'zod';
import { fieldErrors } from '$lib/validation/people';
import type { Actor } from '$server/auth/audit';
import { PeopleError } from '$server/people';

export type ErrorCode =
	| 'bad_request'
	| 'invalid'
	| 'unauthenticated'
	| 'forbidden'
	| 'not_found'
	| 'conflict'
	| 'method_not_allowed'
	| 'unavailable';

/** The HTTP status of each error code (the API document lists them from here). */
export const statusOf: Record<ErrorCode, number> = {
	bad_request: 400,
	invalid: 422,
	unauthenticated: 401,
	forbidden: 403,
	not_found: 404,
	conflict: 409,
	method_not_allowed: 405,
	unavailable: 503
};

/** The one error shape of every API route: `{error: {code, message, details?}}`. */
export class ApiError extends Error {
	constructor(
		public code: ErrorCode,
		message: string,
		public details?: unknown
	) {
		super(message);
	}
}

export function errorResponse(code: ErrorCode, message: string, details?: unknown): Response {
	return json(
		{ error: details === undefined ? { code, message } : { code, message, details } },
		{ status: statusOf[code] }
	);
}

/** Reads a JSON body and validates it; bad JSON and bad fields become ApiErrors. */
export async function readJson<S extends z.ZodType>(
	request: Request,
	schema: S
): Promise<z.infer<S>> {
	let body: unknown;
	try {
		body = await request.json();
	} catch {
		throw new ApiError('bad_request', 'The body must be JSON');
	}
	const parsed = schema.safeParse(body);
	if (!parsed.success)
		throw new ApiError('invalid', 'Some fields are not valid', fieldErrors(parsed.error));
	return parsed.data;
}

/** Wraps an endpoint so thrown ApiErrors and domain errors come out in the one error shape. */
export function endpoint<E>(fn: (event: E) => Promise<Response>): (event: E) => Promise<Response> {
	return async (event) => {
		try {
			return await fn(event);
		} catch (err) {
			if (err instanceof ApiError) return errorResponse(err.code, err.message, err.details);
			if (err instanceof PeopleError) {
				return errorResponse(
					err.code,
					err.message,
					err.field ? { [err.field]: err.message } : undefined
				);
			}
			throw err;
		}
	};
}

export function actorOf(locals: App.Locals, ip: string | null): Actor {
	const user = locals.user;
	return user ? { id: user.id, label: user.email, ip } : { id: null, label: 'anonymous', ip };
}
