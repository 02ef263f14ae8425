import type { Role } from '$lib/permissions';

export function inviteMail(link: string, role: Role, invitedBy: string, expiresAt: Date) {
	return {
		subject: 'You are invited to Skein',
		text: [
			`${invitedBy} invited you to Skein as ${role}.`,
			'',
			'Open this link to choose your name and password:',
			link,
			'',
			`The link works once and expires on ${expiresAt.toISOString().slice(0, 16).replace('T', ' ')} UTC.`
		].join('\n')
	};
}

export function resetMail(link: string) {
	return {
		subject: 'Reset your Skein password',
		text: [
			'Someone (hopefully you) asked to reset your Skein password.',
			'',
			'Open this link to choose a new password:',
			link,
			'',
			'The link works once and expires in one hour. If you did not ask for this, ignore this mail.'
		].join('\n')
	};
}
