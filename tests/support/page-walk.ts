// The walk over every page of a role, at a desktop's width (1440 px) and a phone's (390 px), and the
// event it walks: what tests/e2e/every-page-*.e2e.ts share (two files, so the browser tests can run them
// side by side). The page never scrolls sideways on the phone (a wide table scrolls inside its own
// region), each Tab stop shows a visible focus indicator (WCAG 2.2 SC 2.4.7: the computed outline or box
// shadow is not none; axe does not test it; the first 12 stops by the Tab key, then every other one
// focused in turn), and axe finds nothing. A screenshot of each page at each width goes to
// test-results/screens/ (git-ignored), so anyone can look at the pages after a test run.
import { mkdirSync } from 'node:fs';
import { join } from 'node:path';
import type { Page } from 'playwright-core';
import { expect } from 'vitest';
import { accessibilityViolations, type OpenBrowser } from './browser';
import { appUrl } from './env';
import {
	aSupplierOrganisationWithUser,
	anOpenEvent,
	fillSheet,
	signedIn,
	untilPast,
	uploadSheet,
	type TestEvent
} from './events';
import { aUser, type TestUser } from './factories';
import { finished, post } from './runs';

const SCREENS = join(process.cwd(), 'test-results', 'screens');
export const WIDTHS = [1440, 390] as const;
const TAB_STOPS = 12;

export interface WalkedEvent {
	staff: Record<'buyer' | 'approver' | 'auditor' | 'admin', TestUser>;
	supplier: TestUser;
	/** Opened (past its deadline) with two bids, a lowest-cost run and a run submitted for sign-off. */
	event: TestEvent;
	/** Still open, one supplier invited. */
	openEvent: TestEvent;
	runs: string[];
}

const json = async (response: Response) => (await response.json()) as Record<string, unknown>;

/** The staff of every role, two bidders, an opened event with two runs (one submitted) and an open one. */
export async function anEventToWalk(): Promise<WalkedEvent> {
	mkdirSync(SCREENS, { recursive: true });
	const staff = {} as WalkedEvent['staff'];
	for (const role of ['buyer', 'approver', 'auditor', 'admin'] as const) staff[role] = await aUser(role);
	const bidders = await Promise.all([aSupplierOrganisationWithUser(), aSupplierOrganisationWithUser()]);
	// Room for two browser files setting up side by side: every bid must be in before the deadline.
	const deadline = new Date(Date.now() + 20_000);
	const event = await anOpenEvent({
		createdBy: staff.buyer.id,
		invite: bidders.map((b) => b.organisation.id),
		deadline
	});
	const openEvent = await anOpenEvent({ createdBy: staff.buyer.id, invite: [bidders[0].organisation.id] });
	for (const [k, prices] of [
		[0, [4, 5, 6]],
		[1, [4.2, 4.9, 6.5]]
	] as const) {
		const client = await signedIn(bidders[k].user);
		const sheet = Buffer.from(await (await client.get(`/api/events/${event.id}/bid-sheet`)).arrayBuffer());
		const filled = await fillSheet(sheet, { 'IT-1': [prices[0]], 'IT-2': [prices[1]], 'IT-3': [prices[2]] });
		expect((await uploadSheet(client, event.id, filled)).status).toBe(201);
	}
	await untilPast(deadline);
	const buyer = await signedIn(staff.buyer);
	const plans = (await json(await buyer.get(`/api/events/${event.id}/plans`, 'application/json'))).plans as {
		id: string;
		lowestCost: boolean;
	}[];
	const made = await json(
		await post(buyer, `/api/events/${event.id}/plans`, {
			name: 'Two suppliers',
			rules: [{ type: 'max_share', scope: 'each_item', who: 'each_supplier', percent: 60 }]
		})
	);
	const runs: string[] = [];
	for (const planId of [plans.find((p) => p.lowestCost)!.id, (made.plan as { id: string }).id]) {
		const started = await json(await post(buyer, `/api/plans/${planId}/runs`, {}));
		runs.push(String((await finished(buyer, started.runId as string)).id));
	}
	const submitted = await post(buyer, `/api/runs/${runs[1]}/submit`, {
		justification: 'Two suppliers on every item keep supply safe.'
	});
	expect(submitted.status).toBe(200);
	return { staff, supplier: bidders[0].user, event, openEvent, runs };
}

/** What is wrong with the page in view at this width; empty when nothing is. */
export async function problemsOf(page: Page, name: string, width: number): Promise<string[]> {
	const problems: string[] = [];
	const overflow = await page.evaluate(
		() => document.documentElement.scrollWidth - document.documentElement.clientWidth
	);
	if (overflow > 1) problems.push(`${name} at ${width} px: the page scrolls sideways by ${overflow} px`);
	for (const v of await accessibilityViolations(page))
		problems.push(
			`${name} at ${width} px: axe ${v.id} at ${v.nodes.map((n) => n.target.join(' ')).join(', ')}`
		);
	if (width === WIDTHS[0]) {
		await page.locator('body').focus();
		for (let stop = 0; stop < TAB_STOPS; stop++) {
			await page.keyboard.press('Tab');
			const focus = await page.evaluate(() => {
				const element = document.activeElement as HTMLElement | null;
				if (!element || element === document.body) return null;
				const style = getComputedStyle(element);
				return {
					what: `${element.tagName.toLowerCase()} “${(element.textContent ?? '').trim().slice(0, 30)}”`,
					visible: style.outlineStyle !== 'none' || style.boxShadow !== 'none'
				};
			});
			if (!focus) break;
			if (!focus.visible) problems.push(`${name}: no visible focus on ${focus.what} (Tab stop ${stop + 1})`);
		}
		// Every other stop of the page, focused in turn after the key presses above (so the browser draws
		// the ring as for the keyboard): one script run instead of hundreds of key presses on a long table.
		for (const what of await page.evaluate(() => {
			const stops = [
				...document.querySelectorAll<HTMLElement>(
					'a[href], button, input, select, textarea, summary, [tabindex]:not([tabindex="-1"])'
				)
			].filter(
				(e) =>
					!(e as HTMLButtonElement).disabled &&
					e.tabIndex >= 0 &&
					e.getClientRects().length > 0 &&
					getComputedStyle(e).visibility !== 'hidden' &&
					!e.closest('[inert]')
			);
			return stops.flatMap((e) => {
				e.focus({ preventScroll: true });
				if (document.activeElement !== e) return [];
				const style = getComputedStyle(e);
				return style.outlineStyle !== 'none' || style.boxShadow !== 'none'
					? []
					: [`${e.tagName.toLowerCase()} “${(e.textContent ?? '').trim().slice(0, 30)}”`];
			});
		}))
			problems.push(`${name}: no visible focus on ${what}`);
	}
	return problems;
}

/** The user menu, opened, lies wholly on the screen (it opened off a phone's left edge). */
async function userMenuProblems(page: Page, width: number): Promise<string[]> {
	await page.locator('button[aria-controls="user-menu"]').click();
	const box = await page.locator('#user-menu').boundingBox();
	await page.keyboard.press('Escape');
	if (!box) return [`user menu at ${width} px: did not open`];
	return box.x < 0 || box.x + box.width > width
		? [`user menu at ${width} px: spans ${Math.round(box.x)} to ${Math.round(box.x + box.width)} px`]
		: [];
}

/** Visits each page at each width; returns every problem found, so one run lists them all. */
export async function walk(browser: OpenBrowser, role: string, pages: [string, string][]): Promise<string[]> {
	const { page } = browser;
	const problems: string[] = [];
	for (const width of WIDTHS) {
		await page.setViewportSize({ width, height: 900 });
		for (const [name, path] of pages) {
			const response = await page.goto(`${appUrl()}${path}`);
			await page.waitForLoadState('networkidle', { timeout: 10_000 }).catch(() => undefined);
			if (!response || response.status() >= 400) {
				problems.push(`${name}: answered ${response?.status()}`);
				continue;
			}
			await page.screenshot({ path: join(SCREENS, `${role}-${name}-${width}.png`), fullPage: true });
			problems.push(...(await problemsOf(page, name, width)));
		}
		problems.push(...(await userMenuProblems(page, width)));
	}
	return problems;
}
