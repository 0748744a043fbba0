// A tiny HTTP client with a cookie jar, talking to the built server the test run started.
import { appUrl } from './env';
import { latestMailTo, linkIn } from './mail';

export class Browserless {
	private readonly cookies = new Map<string, string>();

	private remember(response: Response): void {
		for (const line of response.headers.getSetCookie()) {
			const [pair] = line.split(';');
			const index = pair!.indexOf('=');
			const name = pair!.slice(0, index).trim();
			const value = pair!.slice(index + 1).trim();
			if (!value || /max-age=0|expires=thu, 01 jan 1970/i.test(line)) this.cookies.delete(name);
			else this.cookies.set(name, value);
		}
	}

	private cookieHeader(): string {
		return [...this.cookies].map(([k, v]) => `${k}=${v}`).join('; ');
	}

	/** `origin`: what a non-GET request sends as Origin (the app's own by default; null sends none). */
	async request(
		path: string,
		init: RequestInit & { accept?: string; origin?: string | null } = {}
	): Promise<Response> {
		const url = path.startsWith('http') ? path : `${appUrl()}${path}`;
		const headers = new Headers(init.headers);
		headers.set('cookie', this.cookieHeader());
		headers.set('accept', init.accept ?? 'text/html');
		const origin = init.origin === undefined ? appUrl() : init.origin;
		if (init.method && init.method !== 'GET' && origin !== null) headers.set('origin', origin);
		const response = await fetch(url, { ...init, headers, redirect: 'manual' });
		this.remember(response);
		return response;
	}

	get(path: string, accept = 'text/html') {
		return this.request(path, { accept });
	}

	postForm(path: string, fields: Record<string, string>, accept = 'text/html') {
		return this.request(path, { method: 'POST', body: new URLSearchParams(fields), accept });
	}

	/** Follows redirects by hand (keeping cookies) and returns the final response and its address. */
	async follow(response: Response, limit = 10): Promise<{ response: Response; url: string }> {
		let current = response;
		let url = response.url;
		for (let hop = 0; hop < limit && current.status >= 300 && current.status < 400; hop++) {
			url = new URL(current.headers.get('location')!, appUrl()).toString();
			current = await this.get(url);
		}
		return { response: current, url };
	}

	async signInWithPassword(email: string, password: string) {
		const response = await this.postForm('/auth/callback/credentials', { email, password, redirectTo: '/' });
		return this.follow(response);
	}

	async requestSignInLink(email: string) {
		const response = await this.postForm('/signin?/link', {
			providerId: 'nodemailer',
			email,
			redirectTo: '/'
		});
		return this.follow(response);
	}

	async signInByEmailLink(email: string) {
		const sentAfter = new Date();
		await this.requestSignInLink(email);
		const mail = await latestMailTo(email, { after: sentAfter });
		return this.follow(await this.get(linkIn(mail.text)));
	}

	async session(): Promise<Record<string, unknown> | null> {
		const response = await this.get('/auth/session', 'application/json');
		return (await response.json()) as Record<string, unknown> | null;
	}
}
