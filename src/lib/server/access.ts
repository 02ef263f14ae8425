/**
 * Who may reach which route: every route id under src/routes has an entry here (a test walks the
 * route files and fails on any route without one), and the guard handle enforces it before any
 * load, action or endpoint runs. The actions themselves come from the one matrix in $lib/permissions.
 */
import type { Action } from '$lib/permissions';

export type Rule = 'public' | 'signed-in' | Action;

export interface RouteRule {
	/** GET and HEAD */
	read: Rule;
	/** other methods; a record picks by form action name (`?/name`, "default" without one) */
	write?: Rule | Record<string, Rule>;
	/**
	 * a scraper (Prometheus) may read without signing in: with `Authorization: Bearer $METRICS_TOKEN`, or from
	 * a loopback address when METRICS_OPEN=loopback (the address as adapter-node reports it: ADDRESS_HEADER)
	 */
	scraper?: boolean;
}

export const routeRules: Record<string, RouteRule> = {
	'/': { read: 'signed-in' },
	'/about': { read: 'public' },
	'/healthz': { read: 'public' },
	'/metrics': { read: 'ops:metrics', scraper: true },

	'/(auth)/sign-in': { read: 'public', write: 'public' },
	'/(auth)/sign-out': { read: 'public', write: 'public' },
	'/(auth)/forgot': { read: 'public', write: 'public' },
	'/(auth)/reset/[token=token]': { read: 'public', write: 'public' },
	'/(auth)/invite/[token=token]': { read: 'public', write: 'public' },

	'/(app)/runs': { read: 'runs:read' },
	'/(app)/live': { read: 'runs:read' },
	'/(app)/pins': { read: 'pins:read' },
	'/(app)/runs/[id=id]': { read: 'runs:read', write: { pin: 'pins:create' } },
	'/(app)/runs/[id=id]/metrics': { read: 'runs:read', write: { settings: 'runs:configure' } },
	'/(app)/rigs': { read: 'rigs:read', write: 'rigs:manage' },
	'/(app)/rigs/[id=id]': { read: 'rigs:read', write: 'rigs:manage' },
	'/(app)/people': {
		read: 'people:read',
		write: {
			invite: 'people:manage',
			role: 'people:manage',
			active: 'people:manage',
			revokeInvite: 'people:manage'
		}
	},
	'/(app)/settings': {
		read: 'signed-in',
		write: {
			profile: 'signed-in',
			password: 'signed-in',
			revokeSession: 'signed-in',
			createToken: 'signed-in',
			revokeToken: 'signed-in',
			theme: 'signed-in'
		}
	},
	'/(app)/settings/audit': { read: 'audit:read' },
	'/(app)/dev/mail': { read: 'mail:dev' },
	'/(app)/api': { read: 'signed-in' },

	'/api/me': { read: 'signed-in' },
	'/api/people': { read: 'people:read', write: 'people:manage' },
	'/api/people/[id=id]': { read: 'people:read', write: 'people:manage' },
	'/api/tokens': { read: 'signed-in', write: 'signed-in' },
	'/api/tokens/[id=id]': { read: 'signed-in', write: 'signed-in' },
	'/api/rigs': { read: 'rigs:read', write: 'rigs:manage' },
	'/api/rigs/[id=id]': { read: 'rigs:read', write: 'rigs:manage' },
	'/api/rigs/[id=id]/keys': { read: 'rigs:read', write: 'rigs:manage' },
	'/api/keys/[id=id]': { read: 'rigs:read', write: 'rigs:manage' },
	'/api/keys/[id=id]/revoke': { read: 'rigs:read', write: 'rigs:manage' },
	'/api/keys/[id=id]/rotate': { read: 'rigs:read', write: 'rigs:manage' },
	'/api/audit': { read: 'audit:read' },
	'/api/dev/mail': { read: 'mail:dev' },
	'/api/runs': { read: 'runs:read' },
	'/api/runs/[id=id]': { read: 'runs:read' },
	'/api/runs/[id=id]/frames': { read: 'runs:read' },
	'/api/runs/[id=id]/quarantine': { read: 'quarantine:read' },
	'/api/runs/[id=id]/metrics': { read: 'runs:read' },
	'/api/runs/[id=id]/summary': { read: 'runs:read' },
	'/api/runs/[id=id]/settings': { read: 'runs:read', write: 'runs:configure' },
	'/api/runs/[id=id]/series': { read: 'runs:read' },
	'/api/runs/[id=id]/pins': { read: 'pins:read', write: 'pins:create' },
	'/api/pins': { read: 'pins:read' },
	'/api/live': { read: 'runs:read' },
	'/api/openapi.json': { read: 'public' }
};

export function ruleFor(
	routeId: string,
	method: string,
	search: URLSearchParams
): Rule | undefined {
	const entry = routeRules[routeId];
	if (!entry) return undefined;
	if (method === 'GET' || method === 'HEAD' || method === 'OPTIONS') return entry.read;
	const write = entry.write;
	const name = formActionName(search);
	if (write === undefined || name === null) return undefined;
	return typeof write === 'string' ? write : write[name];
}

/**
 * The form action SvelteKit runs: the first `?/name` parameter, "default" without one. An explicit
 * `?/default` is refused by SvelteKit, so it gets no rule here (null).
 */
export function formActionName(search: URLSearchParams): string | null {
	for (const key of search.keys()) {
		if (!key.startsWith('/')) continue;
		const name = key.slice(1);
		return name === 'default' ? null : name;
	}
	return 'default';
}
