// One decision for every cookie Auth.js and SvelteKit set for sign-in: Secure exactly when the public
// origin is https (a Secure cookie is not sent back over plain http), HttpOnly and SameSite=Lax always.
export interface SessionCookiePolicy {
	secure: boolean;
	httpOnly: true;
	sameSite: 'lax';
	sessionCookieName: string;
}

export function sessionCookiePolicy(origin: string): SessionCookiePolicy {
	const secure = new URL(origin).protocol === 'https:';
	return {
		secure,
		httpOnly: true,
		sameSite: 'lax',
		// Auth.js's own naming: the __Secure- prefix is allowed only on Secure cookies.
		sessionCookieName: `${secure ? '__Secure-' : ''}authjs.session-token`
	};
}
