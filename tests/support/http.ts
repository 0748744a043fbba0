// A tiny HTTP client with a cookie jar, talking to the built server the test run started.
import { request as httpRequest } from 'node:http';
import { appUrl } from './env';
import { latestMailTo, linkIn, SIGN_IN_SUBJECT } from './mail';

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

	/** Sets a cookie in the jar as a page of another subdomain could: an attacker's plant. */
	plantCookie(name: string, value: string): void {
		this.cookies.set(name, value);
	}

	/** A second client holding a copy of this one's cookies, as someone who copied them would. */
	copy(): Browserless {
		const twin = new Browserless();
		for (const [name, value] of this.cookies) twin.cookies.set(name, value);
		return twin;
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
		const mail = await latestMailTo(email, { after: sentAfter, subject: SIGN_IN_SUBJECT });
		return this.follow(await this.get(linkIn(mail.text)));
	}

	async session(): Promise<Record<string, unknown> | null> {
		const response = await this.get('/auth/session', 'application/json');
		return (await response.json()) as Record<string, unknown> | null;
	}
}

export interface RawResponse {
	status: number;
	location: string | null;
	setCookie: string[];
	body: string;
}

/**
 * A request with headers fetch would not send as given (Host), as an attacker's own client sends them.
 * Goes to the test server's address whatever the Host header says.
 */
export function rawRequest(
	path: string,
	init: { method?: string; headers?: Record<string, string>; body?: string } = {}
): Promise<RawResponse> {
	const target = new URL(path, appUrl());
	return new Promise((resolve, reject) => {
		const req = httpRequest(
			{
				host: target.hostname,
				port: target.port,
				path: target.pathname + target.search,
				method: init.method ?? 'GET',
				headers: init.headers
			},
			(res) => {
				const chunks: Buffer[] = [];
				res.on('data', (chunk: Buffer) => chunks.push(chunk));
				res.on('end', () =>
					resolve({
						status: res.statusCode ?? 0,
						location: res.headers.location ?? null,
						setCookie: res.headers['set-cookie'] ?? [],
						body: Buffer.concat(chunks).toString('utf8')
					})
				);
				res.on('error', reject);
			}
		);
		req.on('error', reject);
		if (init.body) req.write(init.body);
		req.end();
	});
}
