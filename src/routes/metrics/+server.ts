import { registry } from '$server/observability';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = async () => {
	return new Response(await registry.metrics(), {
		headers: { 'content-type': registry.contentType }
	});
};
