import type { Handle } from '@sveltejs/kit';
import { logger } from '$server/log';
import { httpDuration } from '$server/observability';

export const logging: Handle = async ({ event, resolve }) => {
	const started = performance.now();
	const response = await resolve(event);
	const ms = performance.now() - started;
	const route = event.route.id ?? 'unmatched';
	httpDuration.observe(
		{ method: event.request.method, route, status: String(response.status) },
		ms / 1000
	);
	if (response.status >= 500)
		logger.error(
			{ method: event.request.method, path: event.url.pathname, status: response.status, ms },
			'request failed'
		);
	else
		logger.debug(
			{ method: event.request.method, path: event.url.pathname, status: response.status, ms },
			'request'
		);
	return response;
};
