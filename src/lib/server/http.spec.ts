import { describe, expect, it } from 'vitest';
import svelteConfig from '../../../svelte.config.js';
import { cspDirectives, fallbackCsp, securityHeaders } from './http';

describe('the security headers', () => {
	it('give answers that are not pages the same policy kit.csp gives pages', () => {
		const unquote = (values: string[]) => values.map((v) => v.replace(/^'(.*)'$/, '$1'));
		const pages = svelteConfig.kit?.csp?.directives ?? {};
		expect(Object.keys(cspDirectives).sort()).toEqual(Object.keys(pages).sort());
		for (const [name, values] of Object.entries(cspDirectives))
			expect(unquote(values), name).toEqual(pages[name as keyof typeof pages]);
		expect(fallbackCsp).toContain("frame-ancestors 'none'");
	});

	it('send HSTS only when the public origin is https', () => {
		expect(securityHeaders(true)['strict-transport-security']).toMatch(/^max-age=\d+/);
		expect(securityHeaders(false)['strict-transport-security']).toBeUndefined();
	});
});
