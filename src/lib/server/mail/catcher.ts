/**
 * A local SMTP catcher for development and tests: listens on loopback, keeps the last messages in memory.
 * It never relays anything anywhere.
 */
import { simpleParser } from 'mailparser';
import { SMTPServer } from 'smtp-server';

export interface CaughtMail {
	id: number;
	at: string;
	from: string;
	to: string[];
	subject: string;
	text: string;
	html: string | null;
}

const keep = 200;

export class MailCatcher {
	readonly messages: CaughtMail[] = [];
	#server: SMTPServer;
	#next = 1;
	port = 0;

	constructor() {
		this.#server = new SMTPServer({
			authOptional: true,
			disabledCommands: ['STARTTLS'],
			logger: false,
			size: 5 * 1024 * 1024,
			onData: (stream, session, callback) => {
				simpleParser(stream)
					.then((parsed) => {
						const to = session.envelope.rcptTo.map((r) => r.address);
						this.messages.unshift({
							id: this.#next++,
							at: new Date().toISOString(),
							from: session.envelope.mailFrom ? session.envelope.mailFrom.address : '',
							to,
							subject: parsed.subject ?? '',
							text: parsed.text ?? '',
							html: typeof parsed.html === 'string' ? parsed.html : null
						});
						this.messages.length = Math.min(this.messages.length, keep);
						callback();
					})
					.catch((err: Error) => callback(err));
			}
		});
	}

	listen(port: number, host = '127.0.0.1'): Promise<number> {
		return new Promise((resolve, reject) => {
			this.#server.once('error', reject);
			this.#server.listen(port, host, () => {
				const addr = this.#server.server.address();
				this.port = typeof addr === 'object' && addr ? addr.port : port;
				resolve(this.port);
			});
		});
	}

	close(): Promise<void> {
		return new Promise((resolve) => this.#server.close(() => resolve()));
	}
}
