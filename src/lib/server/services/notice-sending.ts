// The notice job's work: one award or regret notice per bidding supplier after approval, mailed to each
// of the supplier's active users exactly once (services/mail-delivery.ts, key notice:<notice>:<address>).
// A recipient the relay refuses does not hold back the others; the job then fails, pg-boss retries it, and
// the retry mails only the recipients still without the notice. The notice's dispatch time (which starts
// the standstill) is the first successful send and never moves later; the trail records the sending once,
// when every recipient has it.
import ExcelJS from 'exceljs';
import { now } from '../clock';
import { publicOrigin } from '../config';
import {
	completeNotice,
	findNotice,
	findRun,
	noticeRecipients,
	recordNoticeDispatch,
	recordNoticeFailure
} from '../db/awards';
import { findEvent } from '../db/events';
import { db } from '../db/knex';
import { findOrganisation } from '../db/organisations';
import { awardNoticeMail, regretNoticeMail, type NoticeLine } from '../mail/templates';
import { neutralise } from '../sheets/bid-sheet';
import { appendTrail, trailHead } from '../trail';
import { evaluatedSupplierTotals } from '$lib/evaluation/apply-criteria';
import { listCriteria } from '../db/criteria';
import { ownEvaluatedTotal, ownLines } from './award-views';
import { excelMoneyFormat, excelQuantityColumnFormat, excelUnitPriceFormat } from '$lib/format';
import { mailContext } from './events';
import { ownCurrencyAwards, type OwnAward } from './currencies';
import { deliverOnce, type DeliveryOutcome } from './mail-delivery';

export interface NoticeJob {
	noticeId: string;
}

export async function ownLinesWorkbook(
	reference: string,
	supplierName: string,
	lines: NoticeLine[],
	currency: string,
	/** The supplier's own currency, when it bid in another: two more columns, at its own prices. */
	own?: OwnAward
) {
	const workbook = new ExcelJS.Workbook();
	workbook.creator = 'Tenderloom';
	const sheet = workbook.addWorksheet('Award');
	sheet.addRow([`Award lines of ${neutralise(reference)} for ${neutralise(supplierName)}`]);
	sheet.addRow([
		'Item',
		'Quantity',
		`Unit price (${currency})`,
		`Cost (${currency})`,
		...(own ? [`Unit price (${own.code})`, `Cost (${own.code})`] : [])
	]).font = { bold: true };
	lines.forEach((l, k) =>
		sheet.addRow([
			neutralise(l.item),
			l.quantity,
			l.unitPrice,
			l.cost,
			...(own ? [own.lines[k]?.unitPrice ?? null, own.lines[k]?.cost ?? null] : [])
		])
	);
	sheet.views = [{ state: 'frozen', ySplit: 2 }];
	const formats = [
		null,
		excelQuantityColumnFormat(lines.map((l) => l.quantity)),
		excelUnitPriceFormat(currency),
		excelMoneyFormat(currency),
		...(own ? [excelUnitPriceFormat(own.code), excelMoneyFormat(own.code)] : [])
	];
	formats.forEach((format, k) => {
		const column = sheet.getColumn(k + 1);
		column.width = 20;
		if (format) column.numFmt = format;
	});
	return Buffer.from(await workbook.xlsx.writeBuffer());
}

export const noticeDeliveryKey = (noticeId: string, email: string) =>
	`notice:${noticeId}:${email.toLowerCase()}`;

export async function sendNotice(noticeId: string): Promise<void> {
	const notice = await findNotice(db(), noticeId);
	if (!notice || notice.status === 'sent') return;
	const [run, event, supplier, recipients] = await Promise.all([
		findRun(db(), notice.run_id),
		findEvent(db(), notice.event_id),
		findOrganisation(db(), notice.supplier_organisation_id),
		noticeRecipients(db(), notice.supplier_organisation_id)
	]);
	if (!run || !event || !supplier)
		throw new Error(`notice ${noticeId}: its run, event or supplier is missing`);
	const buyer = await findOrganisation(db(), event.organisation_id);
	const head = await trailHead(db(), notice.event_id);
	const context = {
		...mailContext(event, publicOrigin(), buyer?.name ?? 'The buyer'),
		currency: event.currency,
		trailHead: head && { hash: head.hash }
	};
	// At the supplier's own prices; what the buyer compared (criteria in money, the round) said beside them.
	const lines = ownLines(run.result, supplier.name, run.problem);
	const basis = {
		round: run.round,
		// Named only where this run's problem carries criteria money (a run may have been made without).
		criteria:
			evaluatedSupplierTotals(run.problem, run.result?.awards ?? []) === null
				? []
				: (await listCriteria(db(), event.id)).map((c) => c.name),
		evaluatedTotal: ownEvaluatedTotal(run.problem, run.result, supplier.name)
	};
	const ownCurrency =
		notice.kind === 'award' ? (await ownCurrencyAwards(event, run, now())).get(supplier.name) : undefined;
	const standstill = String(
		notice.standstill_ends_on instanceof Date
			? notice.standstill_ends_on.toISOString().slice(0, 10)
			: notice.standstill_ends_on
	);
	const attachments =
		notice.kind === 'award'
			? [
					{
						filename: `award-${event.reference}.xlsx`,
						content: await ownLinesWorkbook(
							event.reference,
							supplier.name,
							lines,
							event.currency,
							ownCurrency
						),
						contentType: 'application/vnd.openxmlformats-officedocument.spreadsheetml.sheet'
					}
				]
			: undefined;
	const outcomes: DeliveryOutcome[] = [];
	const errors: string[] = [];
	for (const email of recipients) {
		const mail =
			notice.kind === 'award'
				? awardNoticeMail(email, context, {
						supplierName: supplier.name,
						lines,
						standstillEndsOn: standstill,
						basis,
						...(ownCurrency ? { ownCurrency } : {})
					})
				: regretNoticeMail(email, context, {
						supplierName: supplier.name,
						standstillEndsOn: standstill,
						basis
					});
		try {
			outcomes.push(
				await deliverOnce(noticeDeliveryKey(noticeId, email), { ...mail, attachments }, (trx, at) =>
					recordNoticeDispatch(trx, noticeId, at)
				)
			);
		} catch (error) {
			errors.push(`${email}: ${(error as Error).message}`);
		}
	}
	const inFlight = outcomes.filter((o) => o === 'in flight').length;
	if (errors.length || inFlight) {
		const reason = errors.length
			? errors.join('; ')
			: `${inFlight} recipient(s) being mailed by another worker`;
		await recordNoticeFailure(db(), noticeId, reason);
		// pg-boss retries the job with backoff; the retry mails only those still without the notice.
		throw new Error(`notice ${noticeId} not yet sent to every recipient: ${reason}`);
	}
	const at = now();
	await db().transaction(async (trx) => {
		// Marked once: a redelivered job that finds the notice sent writes no second trail entry.
		if (!(await completeNotice(trx, noticeId, at))) return;
		const unknown = outcomes.filter((o) => o === 'unknown').length;
		await appendTrail(trx, {
			eventId: notice.event_id,
			actor: 'system',
			action: `${notice.kind} notice sent`,
			detail: {
				supplier: supplier.name,
				recipients: recipients.length,
				lines: lines.length,
				standstillEndsOn: standstill,
				...(unknown ? { recipientsUnconfirmed: unknown } : {})
			},
			at
		});
	});
}
