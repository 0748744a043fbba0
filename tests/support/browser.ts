// Headless Debian Chromium driven by playwright-core, an axe-core check of the page in view, and the
// steps every browser test takes (leaving a page, checking it, signing in).
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { createRequire } from 'node:module';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { chromium, type BrowserContext, type Page } from 'playwright-core';
import { expect } from 'vitest';
import { appUrl, chromiumPath } from './env';
import { latestMailTo, linkIn, SIGN_IN_SUBJECT } from './mail';

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

/**
 * The steps every browser test repeats, on the browser a test file opened in its beforeAll (read when a
 * step runs, so the helpers can be made before the browser is).
 */
export function browserHelpers(current: () => OpenBrowser) {
	/**
	 * Leaves the page before cookies are cleared: Auth.js renews the session cookie on every response, so
	 * a request still in flight (such as a page refreshing its data) would otherwise bring the old session
	 * back.
	 */
	async function leavePage() {
		await current()
			.page.waitForLoadState('networkidle', { timeout: 10_000 })
			.catch(() => undefined);
		await current().page.goto('about:blank');
	}

	async function expectAccessible(what: string) {
		expect(await accessibilityViolations(current().page), what).toEqual([]);
	}

	/** Fills and sends the staff password form of the sign-in page in view. */
	async function submitPassword(email: string, password: string) {
		const { page } = current();
		await page.locator('#password-email').fill(email);
		await page.getByLabel('Password', { exact: true }).fill(password);
		await page.getByRole('button', { name: 'Sign in', exact: true }).click();
	}

	/** Signs a member of staff in by password, from a clean cookie jar; waits for the home page. */
	async function signInAsStaff(
		email: string,
		password: string,
		home: string | RegExp = /\/(buyer|admin|approver|audit)$/
	) {
		const { page, context } = current();
		await leavePage();
		await context.clearCookies();
		await page.goto(`${appUrl()}/signin`);
		const field = page.locator('#password-email');
		try {
			await field.waitFor({ timeout: 10_000 });
		} catch {
			throw new Error(
				`no sign-in form at ${page.url()}: ${(await page.locator('body').innerText()).slice(0, 300)}`
			);
		}
		await submitPassword(email, password);
		await page.waitForURL(typeof home === 'string' ? `**${home}` : home);
	}

	/** Signs a supplier in by the link mailed to it, read from the local mailbox. */
	async function signInBySupplierLink(email: string) {
		const { page, context } = current();
		await leavePage();
		await context.clearCookies();
		await page.goto(`${appUrl()}/signin`);
		const sentAfter = new Date();
		await page.getByLabel('E-mail address').first().fill(email);
		await page.getByRole('button', { name: 'Send the link' }).click();
		await page.waitForURL(/\/signin\/check-email/);
		const mail = await latestMailTo(email, { after: sentAfter, subject: SIGN_IN_SUBJECT });
		await page.goto(linkIn(mail.text));
		await page.waitForURL('**/supplier');
	}

	return { leavePage, expectAccessible, submitPassword, signInAsStaff, signInBySupplierLink };
}
