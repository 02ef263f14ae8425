import { randomBytes } from 'node:crypto';
import type { Role } from '$lib/permissions';
import { systemActor } from '$server/auth/audit';
import { createUser } from '$server/people';

export const testPassword = 'correct-horse-battery';

export function uniqueEmail(tag: string): string {
	return `${tag}-${randomBytes(4).toString('hex')}@example.test`;
}

export async function makePerson(role: Role, tag: string = role) {
	const email = uniqueEmail(tag);
	const user = await createUser(systemActor, {
		email,
		role,
		name: `${tag} person`,
		password: testPassword
	});
	return { ...user, password: testPassword };
}
