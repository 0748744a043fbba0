// Headless Debian Chromium driven by playwright-core, and an axe-core check of the page in view.
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { createRequire } from 'node:module';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { chromium, type BrowserContext, type Page } from 'playwright-core';
import { chromiumPath } from './env';

const require = createRequire(import.meta.url);

export interface OpenBrowser {
	context: BrowserContext;
	page: Page;
	close: () => Promise<void>;
}

export async function openBrowser(): Promise<OpenBrowser> {
	const profile = mkdtempSync(join(tmpdir(), 'tenderloom-chromium-'));
	const context = await chromium.launchPersistentContext(profile, {
		executablePath: chromiumPath(),
		args: [
			'--headless',
			'--no-sandbox',
			'--disable-gpu',
			'--disable-quic',
			'--no-first-run',
			'--disable-background-networking',
			'--disable-component-update',
			'--disable-sync'
		],
		viewport: { width: 1280, height: 900 }
	});
	const page = context.pages()[0] ?? (await context.newPage());
	// Pages must work under the app's Content-Security-Policy: any violation fails the test file.
	const cspViolations: string[] = [];
	context.on('console', (message) => {
		if (/Content Security Policy/i.test(message.text())) cspViolations.push(message.text());
	});
	return {
		context,
		page,
		close: async () => {
			await context.close();
			rmSync(profile, { recursive: true, force: true });
			if (cspViolations.length)
				throw new Error(`Content-Security-Policy violations:\n${cspViolations.join('\n')}`);
		}
	};
}

export interface AxeViolation {
	id: string;
	impact: string | null;
	help: string;
	nodes: { target: string[] }[];
}

/** Runs axe-core (WCAG 2.x A and AA rules) on the page and returns what it found. */
export async function accessibilityViolations(page: Page): Promise<AxeViolation[]> {
	// Evaluated through the DevTools protocol rather than added as a <script>, which the CSP refuses.
	await page.evaluate(readFileSync(require.resolve('axe-core/axe.min.js'), 'utf8'));
	return page.evaluate(async () => {
		const axe = (
			window as unknown as {
				axe: { run: (context: Document, options: object) => Promise<{ violations: AxeViolation[] }> };
			}
		).axe;
		const result = await axe.run(document, {
			runOnly: { type: 'tag', values: ['wcag2a', 'wcag2aa', 'wcag21a', 'wcag21aa'] }
		});
		return result.violations.map((v) => ({
			id: v.id,
			impact: v.impact,
			help: v.help,
			nodes: v.nodes.map((n) => ({ target: n.target }))
		}));
	});
}
