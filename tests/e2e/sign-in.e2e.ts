import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { browserHelpers, openBrowser, type OpenBrowser } from '../support/browser';
import { appUrl } from '../support/env';
import { aUser, closeTestDb } from '../support/factories';

let browser: OpenBrowser;
const { leavePage, expectAccessible, submitPassword } = browserHelpers(() => browser);

beforeAll(async () => {
	browser = await openBrowser();
});
afterAll(async () => {
	await browser?.close();
	await closeTestDb();
});

describe('signing in with a browser', () => {
	it('signs a supplier in by a link read from the local mailbox and shows the role on its home page', async () => {
		const supplier = await aUser('supplier');
		const { page } = browser;
		await page.goto(`${appUrl()}/signin`);
		await expectAccessible('sign-in page');
		await page.getByLabel('E-mail address').first().fill(supplier.email);
		await page.getByRole('button', { name: 'Send the link' }).click();
		await page.waitForURL(/\/signin\/check-email/);
		await expectAccessible('check-your-e-mail page');

		await page.getByRole('link', { name: 'local mailbox' }).click();
		await page.waitForURL('**/dev/mailbox');
		await page.getByLabel('Only messages to').fill(supplier.email);
		await page.getByRole('button', { name: 'Show' }).click();
		await page.waitForURL(/\/dev\/mailbox\?to=/);
		await expectAccessible('local mailbox');
		// The link is mailed by a background job, so it can arrive after the mailbox page was rendered:
		// reload the page until it is there (the page itself does not refresh).
		const message = page.getByTestId('mail-message').first();
		await expect
			.poll(
				async () => {
					if ((await message.count()) === 0) await page.reload();
					return (await message.count()) > 0 ? message.textContent() : '';
				},
				{ timeout: 30_000, interval: 1_000 }
			)
			.toContain('Your Tenderloom sign-in link');
		await message.getByRole('link').first().click();

		await page.waitForURL('**/supplier');
		expect(await page.getByTestId('home-role').textContent()).toBe('Supplier');
		await expectAccessible('supplier home');
	});

	it('signs a buyer in by password, opens the user menu by keyboard and signs out', async () => {
		const buyer = await aUser('buyer');
		const { page } = browser;
		await leavePage();
		await browser.context.clearCookies();
		await page.goto(`${appUrl()}/buyer`);
		await page.waitForURL('**/signin?callbackUrl=%2Fbuyer');
		await submitPassword(buyer.email, buyer.password!);
		await page.waitForURL('**/buyer');
		expect(await page.getByTestId('home-role').textContent()).toBe('Buyer');
		expect(await page.getByRole('complementary', { name: 'Please note' }).textContent()).toContain(
			'decision support, not a legal award'
		);
		await expectAccessible('buyer home');

		const menuButton = page.getByRole('button', { name: /Test buyer/ });
		await menuButton.focus();
		await page.keyboard.press('Enter');
		expect(await menuButton.getAttribute('aria-expanded')).toBe('true');
		await page.keyboard.press('Escape');
		expect(await menuButton.getAttribute('aria-expanded')).toBe('false');
		await page.keyboard.press('Enter');
		await page.getByRole('button', { name: 'Sign out' }).click();
		await page.waitForURL('**/signin?signedOut=1');
		expect(await page.getByRole('status').textContent()).toContain('You have signed out.');
	});

	it('shows one message for a wrong password', async () => {
		const buyer = await aUser('buyer');
		const { page } = browser;
		await leavePage();
		await browser.context.clearCookies();
		await page.goto(`${appUrl()}/signin`);
		await submitPassword(buyer.email, 'not the right one');
		await page.waitForURL(/error=CredentialsSignin/);
		expect(await page.getByRole('alert').textContent()).toBe('The e-mail address or password is not right.');
		await expectAccessible('sign-in page with an error');
	});

	it('lets an administrator invite a user from the users page', async () => {
		const admin = await aUser('admin');
		const { page } = browser;
		await leavePage();
		await browser.context.clearCookies();
		await page.goto(`${appUrl()}/signin`);
		await submitPassword(admin.email, admin.password!);
		await page.waitForURL('**/admin');
		await page.getByRole('navigation', { name: 'Main' }).getByRole('link', { name: 'Users' }).click();
		await page.waitForURL('**/admin/users');
		await expectAccessible('users page');

		const email = `invited-${Date.now()}@example.test`;
		await page.getByLabel('E-mail address', { exact: true }).fill(email);
		await page.getByLabel('Name', { exact: true }).fill('Invited In Browser');
		await page.getByLabel('Role', { exact: true }).selectOption('supplier');
		await page.getByLabel('Or the name of a new supplier').fill(`Browser Supplier ${Date.now()}`);
		await page.getByRole('button', { name: 'Send invitation', exact: true }).click();
		await expect.poll(() => page.getByRole('status').first().textContent()).toContain(`Invited ${email}`);
		await expect.poll(() => page.locator(`[data-email="${email}"]`).count()).toBe(1);
		await expectAccessible('users page after an invitation');
	});

	it('shows an error id on the page for an unknown address', async () => {
		const { page } = browser;
		const response = await page.goto(`${appUrl()}/no-such-page`);
		expect(response?.status()).toBe(404);
		expect(await page.getByRole('heading', { level: 1 }).textContent()).toBe('Page not found');
		const errorId = await page.locator('code').textContent();
		expect(errorId).toMatch(/^[0-9a-f]{8}$/);
		await expectAccessible('404 page');
		// the server logged the same id (the stack runner keeps the web server's log in the run's folder)
		const log = readFileSync(join(process.env.TEST_DATA_DIR!, 'logs', 'web.log'), 'utf8');
		expect(log).toContain(`"errorId":"${errorId}","status":404,"path":"/no-such-page"`);
	});
});
