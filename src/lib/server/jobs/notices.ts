// The notice job: one award or regret notice per bidding supplier after approval, through nodemailer.
// A failure throws, so pg-boss retries with backoff while the relay is down; the notice row records the
// attempts and the dispatch time, and the trail records the sending.
import ExcelJS from 'exceljs';
import { now } from '../clock';
import { findEvent } from '../db/events';
import { db } from '../db/knex';
import { sendMail } from '../mail';
import { awardNoticeMail, regretNoticeMail, type NoticeLine } from '../mail/templates';
import { publicOrigin } from '../config';
import type { RunRow } from '../db/tables';
import { mailContext } from '../services/events';
import { neutralise } from '../sheets/bid-sheet';
import { appendTrail, trailHead } from '../trail';

export async function ownLinesWorkbook(
	reference: string,
	supplierName: string,
	lines: NoticeLine[],
	currency: string
) {
	const workbook = new ExcelJS.Workbook();
	workbook.creator = 'Tenderloom';
	const sheet = workbook.addWorksheet('Award');
	sheet.addRow([`Award lines of ${neutralise(reference)} for ${neutralise(supplierName)}`]);
	sheet.addRow(['Item', 'Quantity', `Unit price (${currency})`, `Cost (${currency})`]).font = { bold: true };
	for (const l of lines) sheet.addRow([neutralise(l.item), l.quantity, l.unitPrice, l.cost]);
	sheet.columns.forEach((c) => (c.width = 20));
	return Buffer.from(await workbook.xlsx.writeBuffer());
}

export async function sendNotice(noticeId: string): Promise<void> {
	const notice = await db()('notices').where({ id: noticeId }).first();
	if (!notice || notice.status === 'sent') return;
	const [run, event, supplier] = await Promise.all([
		db()<RunRow>('award_runs').where({ id: notice.run_id }).first(),
		findEvent(db(), notice.event_id),
		db()('organisations').where({ id: notice.supplier_organisation_id }).first()
	]);
	const buyer = await db()('organisations').where({ id: event!.organisation_id }).first();
	const users: { email: string }[] = await db()('users')
		.where({ organisation_id: supplier.id, role: 'supplier' })
		.whereNull('deactivated_at')
		.select('email');
	const context = {
		...mailContext(event!, publicOrigin(), buyer?.name ?? 'The buyer'),
		currency: event!.currency,
		trailHead: await trailHead(db(), notice.event_id)
	};
	// Only this supplier's own lines, never another's.
	const lines = ((run!.result?.awards ?? []) as (NoticeLine & { supplier: string })[])
		.filter((a) => a.supplier === supplier.name && a.quantity > 0)
		.map(({ item, quantity, unitPrice, cost }) => ({ item, quantity, unitPrice, cost }));
	const standstill = String(
		notice.standstill_ends_on instanceof Date
			? notice.standstill_ends_on.toISOString().slice(0, 10)
			: notice.standstill_ends_on
	);
	try {
		const attachment =
			notice.kind === 'award'
				? [
						{
							filename: `award-${event!.reference}.xlsx`,
							content: await ownLinesWorkbook(event!.reference, supplier.name, lines, event!.currency),
							contentType: 'application/vnd.openxmlformats-officedocument.spreadsheetml.sheet'
						}
					]
				: undefined;
		for (const user of users) {
			const mail =
				notice.kind === 'award'
					? awardNoticeMail(user.email, context, {
							supplierName: supplier.name,
							lines,
							standstillEndsOn: standstill
						})
					: regretNoticeMail(user.email, context, {
							supplierName: supplier.name,
							standstillEndsOn: standstill
						});
			await sendMail({ ...mail, attachments: attachment });
		}
	} catch (error) {
		await db()('notices')
			.where({ id: noticeId })
			.increment('attempts', 1)
			.update({ last_error: (error as Error).message });
		throw error;
	}
	const at = now();
	await db().transaction(async (trx) => {
		await trx('notices')
			.where({ id: noticeId })
			.increment('attempts', 1)
			.update({ status: 'sent', sent_at: at, last_error: null });
		await appendTrail(trx, {
			eventId: notice.event_id,
			actor: 'system',
			action: `${notice.kind} notice sent`,
			detail: {
				supplier: supplier.name,
				recipients: users.length,
				lines: lines.length,
				standstillEndsOn: standstill
			},
			at
		});
	});
}
