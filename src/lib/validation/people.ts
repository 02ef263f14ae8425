import { z } from 'zod';
import { roles } from '$lib/permissions';

export const emailField = z
	.string({ error: 'Enter an e-mail address' })
	.trim()
	.toLowerCase()
	.max(254, 'At most 254 characters')
	.pipe(z.email({ error: 'Enter a valid e-mail address' }));

export const passwordField = z
	.string({ error: 'Enter a password' })
	.min(10, 'At least 10 characters')
	.max(256, 'At most 256 characters');

export const nameField = z
	.string({ error: 'Enter a name' })
	.trim()
	.min(1, 'Enter a name')
	.max(120, 'At most 120 characters');

export const roleField = z.enum(roles, { error: `Role must be one of: ${roles.join(', ')}` });

export const signInSchema = z.object({
	email: emailField,
	password: z.string({ error: 'Enter your password' }).min(1, 'Enter your password').max(256)
});

export const inviteSchema = z.object({ email: emailField, role: roleField });

export const acceptInviteSchema = z
	.object({ name: nameField, password: passwordField, confirm: z.string() })
	.refine((v) => v.password === v.confirm, {
		path: ['confirm'],
		message: 'Passwords do not match'
	});

export const resetRequestSchema = z.object({ email: emailField });

export const resetSchema = z
	.object({ password: passwordField, confirm: z.string() })
	.refine((v) => v.password === v.confirm, {
		path: ['confirm'],
		message: 'Passwords do not match'
	});

export const changePasswordSchema = z
	.object({
		current: z.string().min(1, 'Enter your current password'),
		password: passwordField,
		confirm: z.string(),
		/** a checkbox: "on" when ticked, absent when not */
		revokeTokens: z
			.literal('on', { error: 'revokeTokens is a checkbox' })
			.optional()
			.transform((v) => v === 'on')
	})
	.refine((v) => v.password === v.confirm, {
		path: ['confirm'],
		message: 'Passwords do not match'
	});

export const setRoleSchema = z.object({ role: roleField });

/** PATCH /api/people/{id}: a new role, active or not, or both. */
export const patchPersonSchema = z
	.object({
		role: roleField.optional(),
		active: z.boolean({ error: 'active must be true or false' }).optional()
	})
	.strict()
	.refine((v) => v.role !== undefined || v.active !== undefined, {
		message: 'Send role and/or active'
	});

export const tokenNameSchema = z.object({
	name: z
		.string({ error: 'Enter a name' })
		.trim()
		.min(1, 'Enter a name')
		.max(80, 'At most 80 characters')
});

export const addPersonSchema = z.object({
	email: emailField,
	role: roleField,
	name: nameField.optional(),
	password: passwordField.optional()
});

/** Field errors in the shape forms and the API both show. */
export function fieldErrors(error: z.ZodError): Record<string, string> {
	const out: Record<string, string> = {};
	for (const issue of error.issues) {
		const key = issue.path.join('.') || '_';
		out[key] ??= issue.message;
	}
	return out;
}
