import type { Config } from 'tailwindcss';

// Tenderloom's own design tokens: warm undyed-yarn neutrals, a woad blue for action and a madder red
// for danger, named after the loom and its dyes rather than any product's palette.
export default {
	content: ['./src/**/*.{html,svelte,ts}'],
	theme: {
		extend: {
			colors: {
				yarn: {
					50: '#faf8f4',
					100: '#f2eee6',
					200: '#e3dccf',
					300: '#cbc0ad',
					500: '#8a7e6b',
					700: '#4f4639',
					900: '#25211b'
				},
				woad: {
					50: '#eef3f8',
					100: '#d6e2ee',
					500: '#3b6690',
					600: '#2f5478',
					700: '#24425f',
					900: '#142536'
				},
				weld: { 50: '#fcf7e6', 200: '#f0dc96', 600: '#8a6a0c', 800: '#5a4508' },
				madder: { 50: '#fbeeec', 200: '#efc0b8', 600: '#a3392a', 800: '#6e2519' },
				moss: { 50: '#eef5ee', 600: '#3d6b40', 800: '#274528' }
			},
			fontFamily: {
				sans: ['"Public Sans"', 'system-ui', 'sans-serif']
			},
			fontSize: {
				note: ['0.8125rem', { lineHeight: '1.25rem' }],
				body: ['0.9375rem', { lineHeight: '1.5rem' }],
				lead: ['1.0625rem', { lineHeight: '1.625rem' }],
				heading: ['1.375rem', { lineHeight: '1.875rem', fontWeight: '600' }],
				title: ['1.875rem', { lineHeight: '2.25rem', fontWeight: '700' }]
			}
		}
	}
} satisfies Config;
