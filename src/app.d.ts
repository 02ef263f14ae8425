import type { SessionInfo, SessionUser } from '$server/auth/sessions';

declare global {
	namespace App {
		interface Locals {
			user: SessionUser | null;
			session: SessionInfo | null;
			via: 'session' | 'token' | null;
		}
		interface Error {
			message: string;
		}
	}
}

export {};
