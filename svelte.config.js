import adapter from '@sveltejs/adapter-node';
import { vitePreprocess } from '@sveltejs/vite-plugin-svelte';

/** @type {import('@sveltejs/kit').Config} */
const config = {
	preprocess: vitePreprocess(),
	kit: {
		adapter: adapter({ out: 'build' }),
		// SvelteKit's origin check is the CSRF guard for every form POST, Auth.js's included.
		csrf: { trustedOrigins: [] }
	}
};

export default config;
