import { error } from '@sveltejs/kit';
import { mailCatcher, usesCatcher } from '$server/mail';
import type { PageServerLoad } from './$types';

export const load = (() => {
	if (!usesCatcher())
		error(404, 'Mail goes to a real SMTP server here (SMTP_URL); nothing is caught');
	return { messages: mailCatcher()?.messages.slice() ?? [] };
}) satisfies PageServerLoad;
