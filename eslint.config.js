import js from '@eslint/js';
import svelte from 'eslint-plugin-svelte';
import globals from 'globals';
import ts from 'typescript-eslint';
import svelteConfig from './svelte.config.js';

export default ts.config(
	{ ignores: ['build/', '.svelte-kit/', 'node_modules/', '.data/', 'static/', 'bench-results/'] },
	js.configs.recommended,
	...ts.configs.recommended,
	...svelte.configs.recommended,
	{
		languageOptions: { globals: { ...globals.browser, ...globals.node } }
	},
	{
		files: ['**/*.ts', '**/*.svelte', '**/*.svelte.ts'],
		languageOptions: {
			parserOptions: {
				projectService: true,
				extraFileExtensions: ['.svelte'],
				parser: ts.parser,
				svelteConfig
			}
		},
		rules: {
			'@typescript-eslint/no-floating-promises': 'error',
			'@typescript-eslint/no-misused-promises': 'error',
			'@typescript-eslint/no-unused-vars': ['error', { argsIgnorePattern: '^_', varsIgnorePattern: '^_' }],
			'no-undef': 'off',
			// Tenderloom is served at the root of its origin (no kit.paths.base), so plain hrefs are right.
			'svelte/no-navigation-without-resolve': 'off'
		}
	},
	{
		files: ['**/*.js', '**/*.mjs'],
		...ts.configs.disableTypeChecked
	},
	// Which layer may import which, flagged in the editor; src/architecture.spec.ts checks the same rules
	// (and the award core's purity) over the whole tree in npm test.
	{
		files: ['src/routes/**'],
		rules: {
			'no-restricted-imports': [
				'error',
				{
					patterns: [
						{ group: ['$lib/server/db', '$lib/server/db/*'], message: 'Routes call services, never db/*.' }
					]
				}
			]
		}
	},
	{
		files: ['src/lib/server/db/**'],
		rules: {
			'no-restricted-imports': [
				'error',
				{
					patterns: [
						{
							group: ['../services', '../services/*', '../sheets/*', '../jobs', '../jobs/*'],
							message: 'db/* is the bottom layer: no services, sheets or jobs.'
						}
					]
				}
			]
		}
	},
	{
		files: ['src/lib/server/services/**'],
		rules: {
			'no-restricted-imports': [
				'error',
				{
					patterns: [
						{
							regex: '^\\.\\./jobs(/index|/handlers(/.*)?)?$',
							message: 'Services send jobs through ../jobs/queue only.'
						}
					]
				}
			]
		}
	}
);
