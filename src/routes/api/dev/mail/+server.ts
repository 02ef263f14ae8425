import { json } from '@sveltejs/kit';
import { ApiError, endpoint } from '$server/api';
import { mailCatcher, usesCatcher } from '$server/mail';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint(async () => {
	if (!usesCatcher())
		throw new ApiError('not_found', 'Mail goes to a real SMTP server here; nothing is caught');
	return json({ messages: mailCatcher()?.messages ?? [] });
});
