/** The demo: a sign-in for a newcomer. Idempotent. (Rigs, keys and recorded runs join as ingest lands.) */
import { systemActor } from '../src/lib/server/auth/audit';
import { createUser, findUserByEmail } from '../src/lib/server/people';

export const demoAdmin = {
	email: process.env.DEMO_ADMIN_EMAIL ?? 'admin@skein.test',
	password: process.env.DEMO_ADMIN_PASSWORD ?? 'skein-demo-admin'
};

const demoPeople = [
	{ email: 'ines.varga@skein.test', name: 'Ines Varga', role: 'operator' as const },
	{ email: 'tomas.oyelaran@skein.test', name: 'Tomas Oyelaran', role: 'engineer' as const },
	{ email: 'mei.castellan@skein.test', name: 'Mei Castellan', role: 'triage' as const },
	{ email: 'ruben.alsaker@skein.test', name: 'Ruben Alsaker', role: 'viewer' as const }
];

export async function seedDemo(): Promise<void> {
	if (!(await findUserByEmail(demoAdmin.email))) {
		await createUser(systemActor, { email: demoAdmin.email, role: 'admin', name: 'Demo Admin', password: demoAdmin.password });
	}
	for (const p of demoPeople) {
		if (!(await findUserByEmail(p.email))) {
			await createUser(systemActor, { ...p, password: demoAdmin.password });
		}
	}
}
