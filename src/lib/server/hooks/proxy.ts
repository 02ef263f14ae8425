import { error, json, type Handle } from '@sveltejs/kit';

/**
 * With a trusted proxy configured (adapter-node's ADDRESS_HEADER, and XFF_DEPTH for x-forwarded-for), the client
 * address comes from its header, and adapter-node throws when the header is missing or holds fewer addresses
 * than XFF_DEPTH. Such a request did not come through the proxy: answer 400 here instead of a 500 later (the
 * sign-in throttle, the audit log). /healthz stays reachable directly, for probes on the host.
 */
export const trustedProxy: Handle = ({ event, resolve }) => {
	if (!process.env.ADDRESS_HEADER || event.url.pathname === '/healthz') return resolve(event);
	try {
		event.getClientAddress();
	} catch {
		const message = `This server takes requests through its proxy only (no usable ${process.env.ADDRESS_HEADER} header)`;
		if (event.url.pathname.startsWith('/api/') || event.url.pathname === '/metrics')
			return json({ error: { code: 'bad_request', message } }, { status: 400 });
		error(400, message);
	}
	return resolve(event);
};
