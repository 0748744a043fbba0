import { afterAll, describe, expect, it } from 'vitest';
import { closeTestDb } from '../support/factories';
import {
	aSignedInUser,
	aSupplierOrganisationWithUser,
	anOpenEvent,
	fillSheet,
	signedIn,
	uploadSheet
} from '../support/events';

afterAll(closeTestDb);

/** A page's text as a reader gets it: no tags, no rendering markers, white space collapsed. */
const textOf = (html: string) =>
	html
		.replace(/<!--[\s\S]*?-->/g, '')
		.replace(/<[^>]+>/g, '')
		.replace(/\s+/g, ' ');

// Issue 13: the home pages said "There is nothing waiting for you yet." while a supplier had an open
// invitation without a bid and the buyer had events to evaluate.
describe('home pages list the work waiting', () => {
	it('shows a supplier its open invitation with the deadline, then its bid once it is in', async () => {
		const buyer = await aSignedInUser('buyer');
		const { organisation, user } = await aSupplierOrganisationWithUser();
		const supplier = await signedIn(user);
		const event = await anOpenEvent({ createdBy: buyer.user.id, invite: [organisation.id] });
		const before = textOf(await (await supplier.get('/supplier')).text());
		expect(before).toContain(event.reference);
		expect(before).toContain('You have not bid yet.');
		expect(before).toMatch(/Bids close \d{4}-\d{2}-\d{2} \d{2}:\d{2} \([A-Za-z_/]+\)\./);
		expect(before).not.toContain('nothing waiting');

		const sheet = Buffer.from(await (await supplier.get(`/api/events/${event.id}/bid-sheet`)).arrayBuffer());
		expect((await uploadSheet(supplier, event.id, await fillSheet(sheet, { 'IT-1': [3] }))).status).toBe(201);
		const after = textOf(await (await supplier.get('/supplier')).text());
		expect(after).toContain('Your bid is in (revision 1');
		expect(after).not.toContain('You have not bid yet.');
	});

	it('gives a buyer each event that needs something with its next step', async () => {
		const buyer = await aSignedInUser('buyer');
		const { organisation } = await aSupplierOrganisationWithUser();
		const draft = await anOpenEvent({ createdBy: buyer.user.id, invite: [organisation.id], state: 'draft' });
		const open = await anOpenEvent({ createdBy: buyer.user.id, invite: [organisation.id] });
		const page = textOf(await (await buyer.client.get('/buyer')).text());
		const around = (reference: string) => page.slice(page.indexOf(reference), page.indexOf(reference) + 300);
		expect(around(draft.reference)).toContain('Check the terms and publish');
		expect(around(open.reference)).toContain('Open for bids until the deadline');
		expect(page).not.toContain('nothing waiting');
	});
});
