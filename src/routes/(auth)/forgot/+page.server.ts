import { resetRequestSchema } from '$lib/validation/people';
import { audit } from '$server/auth/audit';
import { parseForm } from '$server/forms';
import { publicUrl, sendMail } from '$server/mail';
import { resetMail } from '$server/mail/templates';
import { createPasswordReset } from '$server/people';
import type { Actions } from './$types';

export const actions = {
	default: async ({ request, getClientAddress }) => {
		const parsed = await parseForm(request, resetRequestSchema);
		if (!parsed.ok) return parsed.failure;
		const ip = getClientAddress();
		const reset = await createPasswordReset(parsed.data.email);
		if (reset) {
			const mail = resetMail(publicUrl(`/reset/${reset.token}`));
			await sendMail({ to: reset.user.email, kind: 'password-reset', ...mail });
			await audit(
				{ id: reset.user.id, label: reset.user.email, ip },
				'password.reset_requested',
				reset.user.email
			);
		} else {
			await audit(
				{ id: null, label: parsed.data.email, ip },
				'password.reset_requested_unknown',
				parsed.data.email
			);
		}
		// the same answer either way, so the form does not reveal who has an account
		return { sent: true, email: parsed.data.email };
	}
} satisfies Actions;
