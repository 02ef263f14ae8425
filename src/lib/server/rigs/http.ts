import { ApiError, endpoint } from '$server/api';
import { formError } from '$server/forms';
import { RigsError } from '.';

/** endpoint() from $server/api, also turning RigsError into the one error shape. */
export function rigsEndpoint<E>(
	fn: (event: E) => Promise<Response>
): (event: E) => Promise<Response> {
	return endpoint(async (event: E) => {
		try {
			return await fn(event);
		} catch (err) {
			if (err instanceof RigsError)
				throw new ApiError(
					err.code,
					err.message,
					err.field ? { [err.field]: err.message } : undefined
				);
			throw err;
		}
	});
}

/** A form action's answer to a RigsError; anything else is rethrown. */
export function rigsFormFailure(err: unknown, values: Record<string, string> = {}) {
	if (err instanceof RigsError) {
		const status = err.code === 'not_found' ? 404 : err.code === 'conflict' ? 409 : 400;
		return formError(status, err.message, err.field ?? '_', values);
	}
	throw err;
}
