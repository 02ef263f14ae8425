import type { Handle, HandleServerError, ServerInit } from '@sveltejs/kit';
import { sequence } from '@sveltejs/kit/hooks';
import { guard } from '$server/hooks/guard';
import { logging } from '$server/hooks/logging';
import { trustedProxy } from '$server/hooks/proxy';
import { runIds } from '$server/hooks/run-ids';
import { session } from '$server/hooks/session';
import { theme } from '$server/hooks/theme';
import { logger } from '$server/log';
import { startMailCatcher } from '$server/mail';

export const init: ServerInit = async () => {
	await startMailCatcher();
};

export const handle: Handle = sequence(logging, trustedProxy, theme, session, guard, runIds);

export const handleError: HandleServerError = ({ error, event, status, message }) => {
	if (status >= 500) logger.error({ err: error, path: event.url.pathname }, 'unhandled error');
	return {
		message: status >= 500 ? 'Something went wrong on our side; it has been logged.' : message
	};
};
