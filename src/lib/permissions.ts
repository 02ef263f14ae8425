/**
 * The one permission matrix: which role may do which action.
 * Shared by server (enforcement) and browser (to hide what a role cannot do).
 */
export const roles = ['admin', 'operator', 'engineer', 'triage', 'viewer'] as const;
export type Role = (typeof roles)[number];

export const actions = [
	'runs:read',
	'runs:configure',
	'quarantine:read',
	'pins:read',
	'pins:create',
	'rigs:read',
	'rigs:manage',
	'people:read',
	'people:manage',
	'audit:read',
	'mail:dev',
	'ops:metrics'
] as const;
export type Action = (typeof actions)[number];

const everyone: Action[] = ['runs:read', 'pins:read', 'rigs:read'];

export const matrix: Record<Role, ReadonlySet<Action>> = {
	admin: new Set(actions),
	operator: new Set([...everyone, 'rigs:manage', 'quarantine:read', 'ops:metrics']),
	engineer: new Set([...everyone, 'runs:configure', 'quarantine:read', 'pins:create']),
	triage: new Set([...everyone, 'pins:create']),
	viewer: new Set(everyone)
};

export function can(role: Role | null | undefined, action: Action): boolean {
	return role ? matrix[role].has(action) : false;
}

export function isRole(value: unknown): value is Role {
	return typeof value === 'string' && (roles as readonly string[]).includes(value);
}

export const roleDescriptions: Record<Role, string> = {
	admin: 'Everything, including people, audit log and settings',
	operator: 'Manages rigs and their feed keys; reads runs',
	engineer: 'Reads runs and quarantine, tunes metric settings, pins moments',
	triage: 'Reads runs and pins moments for follow-up',
	viewer: 'Reads runs and pins'
};
