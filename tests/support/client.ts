/** A tiny HTTP client that keeps a cookie jar, for signing in and posting forms like a browser. */
export class Browserish {
	cookies = new Map<string, string>();
	constructor(public base: string) {}

	#cookieHeader() {
		return [...this.cookies].map(([k, v]) => `${k}=${v}`).join('; ');
	}

	#keep(res: Response) {
		for (const line of res.headers.getSetCookie()) {
			const [pair, ...attrs] = line.split(';');
			const i = pair.indexOf('=');
			const name = pair.slice(0, i).trim();
			const value = pair.slice(i + 1).trim();
			const expired = attrs.some((a) => /max-age=0/i.test(a.trim()));
			if (expired || value === '') this.cookies.delete(name);
			else this.cookies.set(name, value);
		}
	}

	async request(path: string, init: RequestInit = {}): Promise<Response> {
		const headers = new Headers(init.headers);
		if (this.cookies.size) headers.set('cookie', this.#cookieHeader());
		const res = await fetch(this.base + path, { ...init, headers, redirect: 'manual' });
		this.#keep(res);
		return res;
	}

	get(path: string, headers: Record<string, string> = {}) {
		return this.request(path, { headers: { accept: 'text/html', ...headers } });
	}

	/** Posts a form as a browser without JavaScript does (same origin, urlencoded, HTML accepted). */
	postForm(path: string, fields: Record<string, string>) {
		return this.request(path, {
			method: 'POST',
			headers: {
				origin: this.base,
				'content-type': 'application/x-www-form-urlencoded',
				accept: 'text/html'
			},
			body: new URLSearchParams(fields).toString()
		});
	}

	json(path: string, method: string, body?: unknown, headers: Record<string, string> = {}) {
		return this.request(path, {
			method,
			headers: {
				origin: this.base,
				'content-type': 'application/json',
				accept: 'application/json',
				...headers
			},
			body: body === undefined ? undefined : typeof body === 'string' ? body : JSON.stringify(body)
		});
	}

	async signIn(email: string, password: string): Promise<Response> {
		return this.postForm('/sign-in', { email, password });
	}
}
