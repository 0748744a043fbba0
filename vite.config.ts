import { sveltekit } from '@sveltejs/kit/vite';
import tailwindcss from '@tailwindcss/vite';
import { defineConfig } from 'vitest/config';

export default defineConfig({
	plugins: [tailwindcss(), sveltekit()],
	server: { host: '127.0.0.1' },
	preview: { host: '127.0.0.1' },
	test: {
		// The three kinds of test of DEVELOPERS.md; the stack runner (docker-free-fakes/stack.ts) hands
		// integration and browser tests the URLs of the services it started through the environment.
		projects: [
			{
				extends: true,
				test: { name: 'unit', include: ['src/**/*.spec.ts'], environment: 'node' }
			},
			{
				extends: true,
				test: {
					name: 'integration',
					include: ['tests/integration/**/*.spec.ts'],
					environment: 'node',
					testTimeout: 30_000,
					hookTimeout: 30_000
				}
			},
			{
				extends: true,
				test: {
					name: 'e2e',
					include: ['tests/e2e/**/*.e2e.ts'],
					environment: 'node',
					testTimeout: 90_000,
					hookTimeout: 60_000,
					fileParallelism: false
				}
			}
		]
	}
});
