import adapter from '@sveltejs/adapter-node';
import { vitePreprocess } from '@sveltejs/vite-plugin-svelte';

/** @type {import('@sveltejs/kit').Config} */
const config = {
	preprocess: vitePreprocess(),
	kit: {
		adapter: adapter({ out: 'build' }),
		// SvelteKit's origin check guards form POSTs; hooks.server.ts refuses every other foreign request.
		csrf: { trustedOrigins: [] },
		// Scripts only from our origin, inline ones with SvelteKit's per-answer nonce. Styles allow
		// 'unsafe-inline' for style attributes (bar widths in RunView, app.html's wrapper); injected CSS
		// cannot call out, since images, fonts and connections are limited to our origin as well.
		// src/lib/server/http.ts (cspDirectives) repeats this policy for answers that are not pages.
		csp: {
			mode: 'auto',
			directives: {
				'default-src': ['self'],
				'script-src': ['self'],
				'style-src': ['self', 'unsafe-inline'],
				'img-src': ['self', 'data:'],
				'font-src': ['self'],
				'connect-src': ['self'],
				'form-action': ['self'],
				'frame-ancestors': ['none'],
				'base-uri': ['self'],
				'object-src': ['none']
			}
		}
	}
};

export default config;
