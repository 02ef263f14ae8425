import nodemailer, { type Transporter } from 'nodemailer';
import { db, schema } from '$server/db';
import { logger } from '$server/log';
import { MailCatcher } from './catcher';

/**
 * Outgoing mail through SMTP. Without SMTP_URL, a local catcher on loopback receives everything
 * (readable by admins on the dev mail page); with SMTP_URL, mail goes to that server.
 */
let transport: Transporter | undefined;
let catcher: MailCatcher | undefined;
let catcherStarting: Promise<void> | undefined;

export function mailCatcher(): MailCatcher | undefined {
	return catcher;
}

export function usesCatcher(): boolean {
	return !process.env.SMTP_URL;
}

export async function startMailCatcher(): Promise<void> {
	if (!usesCatcher()) return;
	catcherStarting ??= (async () => {
		const c = new MailCatcher();
		const port = await c.listen(Number(process.env.MAIL_CATCHER_PORT ?? 0));
		catcher = c;
		transport = nodemailer.createTransport({
			host: '127.0.0.1',
			port,
			secure: false,
			ignoreTLS: true
		});
		logger.info({ port }, 'mail catcher listening on loopback');
	})();
	await catcherStarting;
}

async function getTransport(): Promise<Transporter> {
	if (process.env.SMTP_URL) {
		transport ??= nodemailer.createTransport(process.env.SMTP_URL);
		return transport;
	}
	await startMailCatcher();
	return transport!;
}

export interface OutgoingMail {
	to: string;
	subject: string;
	text: string;
	kind: 'invite' | 'password-reset' | 'notice';
}

export async function sendMail(mail: OutgoingMail): Promise<void> {
	const from = process.env.MAIL_FROM ?? 'Skein <skein@localhost>';
	try {
		const t = await getTransport();
		await t.sendMail({ from, to: mail.to, subject: mail.subject, text: mail.text });
		await db()
			.insert(schema.mailOutbox)
			.values({ to: mail.to, subject: mail.subject, kind: mail.kind, status: 'sent' });
	} catch (err) {
		const message = err instanceof Error ? err.message : String(err);
		logger.error({ err: message, to: mail.to, kind: mail.kind }, 'mail not sent');
		await db().insert(schema.mailOutbox).values({
			to: mail.to,
			subject: mail.subject,
			kind: mail.kind,
			status: 'failed',
			error: message
		});
		throw err;
	}
}

/**
 * The origin links in mail point at: ORIGIN, or without it the app's own address (http://HOST:PORT, with
 * `localhost` for a wildcard HOST). Never the request's Host header, which whoever asks for a reset chooses.
 */
export function publicOrigin(): string {
	if (process.env.ORIGIN) return new URL(process.env.ORIGIN).origin;
	const host = process.env.HOST ?? '127.0.0.1';
	const name = host === '' || host === '0.0.0.0' || host === '::' ? 'localhost' : host;
	const bracketed = name.includes(':') ? `[${name}]` : name;
	return `http://${bracketed}:${process.env.PORT ?? 3000}`;
}

export function publicUrl(path: string): string {
	return new URL(path, publicOrigin()).toString();
}
