// The buyer's pages at 1440 px and 390 px: no sideways scrolling, a visible focus on every Tab stop,
// nothing axe finds (tests/support/page-walk.ts); and the checks themselves, shown a fault.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { browserHelpers, openBrowser, type OpenBrowser } from '../support/browser';
import { appUrl } from '../support/env';
import { closeTestDb } from '../support/factories';
import { anEventToWalk, problemsOf, walk, WIDTHS, type WalkedEvent } from '../support/page-walk';

let browser: OpenBrowser;
let walked: WalkedEvent;
const { signInAsStaff } = browserHelpers(() => browser);

beforeAll(async () => {
	browser = await openBrowser();
	walked = await anEventToWalk();
}, 120_000);

afterAll(async () => {
	await browser?.close();
	await closeTestDb();
});

describe('every page of the buyer, at 1440 px and 390 px', () => {
	it('the buyer’s pages', async () => {
		await signInAsStaff(walked.staff.buyer.email, walked.staff.buyer.password!);
		const at = `/buyer/events/${walked.event.id}`;
		const problems = await walk(browser, 'buyer', [
			['home', '/buyer'],
			['events', '/buyer/events'],
			['new-event', '/buyer/events/new'],
			['event', at],
			['items', `${at}/items`],
			['suppliers', `${at}/suppliers`],
			['questions', `${at}/questions`],
			['bids', `${at}/bids`],
			['bids-before-deadline', `/buyer/events/${walked.openEvent.id}/bids`],
			['low-prices', `${at}/bids/low`],
			['criteria', `${at}/criteria`],
			['criteria-open', `/buyer/events/${walked.openEvent.id}/criteria`],
			['award', `${at}/award`],
			['run', `${at}/award/runs/${walked.runs[0]}`],
			['compare', `${at}/award/compare?run=${walked.runs[0]}&run=${walked.runs[1]}`],
			['trail', `/events/${walked.event.id}/trail`],
			['account', '/account']
		]);
		expect(problems).toEqual([]);
	});

	// The checks above would pass on any page if they could not see a fault: here they must see two.
	it('finds a focus ring taken away and a page that scrolls sideways (the checks themselves)', async () => {
		const { page } = browser;
		await page.setViewportSize({ width: WIDTHS[0], height: 900 });
		await page.goto(`${appUrl()}/buyer/events`);
		await page.addStyleTag({
			content: '*:focus, *:focus-visible { outline: none !important; box-shadow: none !important; }'
		});
		await page.evaluate(() => {
			const wide = document.createElement('div');
			wide.style.width = '3000px';
			wide.style.height = '1px';
			document.querySelector('main')?.append(wide);
		});
		const problems = await problemsOf(page, 'events', WIDTHS[0]);
		expect(problems.some((p) => /^events at 1440 px: the page scrolls sideways by \d+ px$/.test(p))).toBe(
			true
		);
		expect(problems.some((p) => p.startsWith('events: no visible focus on '))).toBe(true);
	});
});
