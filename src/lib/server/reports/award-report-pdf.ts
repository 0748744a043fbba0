// The award report as a PDF, its sections in the order of the issue that asked for it: the event, the
// bidders, the rules and their costs, the award per supplier, savings, the lowest-cost comparison, manual
// changes, the sign-off, the notices and the trail head. Amounts in the currency's minor units, times in
// the event's time zone with the zone named.
import { formatChange, formatMoney, formatQuantity, formatShare, formatUnitPrice } from '$lib/format';
import { formatInZone } from '$lib/time';
import { REPORT_CAUTION, describeChange, type AwardReport } from './award-report';
import { ReportPdf, type Column } from './pdf-writer';

const decisionText = (s: AwardReport['signoffs'][number]) =>
	s.decision === 'approve'
		? 'Approved'
		: s.decision === 'return'
			? 'Returned to the buyer'
			: s.supersededAt
				? 'Superseded before a decision'
				: 'Awaiting a decision';

export async function awardReportPdf(report: AwardReport): Promise<Buffer> {
	const { event, run, totals } = report;
	const currency = event.currency;
	const zone = event.timeZone;
	const at = (date: Date | null) => (date ? `${formatInZone(date, zone)} (${zone})` : '—');
	const money = (value: number | null) => (value === null ? '—' : formatMoney(value, currency));
	// A run on evaluated cost stores evaluated costs on its lines: they are named so.
	const evaluated = totals.priceTotal !== null;
	const costWord = evaluated ? 'Evaluated cost' : 'Cost';
	const signed = (value: number) => `${value > 0 ? '+' : value < 0 ? '−' : '±'}${money(Math.abs(value))}`;

	const pdf = new ReportPdf({
		title: `Award report ${event.reference}, run ${run.number}`,
		subject: event.title,
		createdAt: report.generatedAt
	});
	const w = pdf.width;
	const cols = (...spec: [string, number, ('left' | 'right')?][]): Column[] =>
		spec.map(([header, share, align]) => ({ header, width: w * share, align: align ?? 'left' }));

	pdf.title('Award report');
	pdf.paragraph(`${event.reference} · ${event.title}`, { weight: 'bold', size: 12 });
	pdf.paragraph(
		`Run ${run.number} of the plan “${run.plan}”${(run.round ?? 1) > 1 ? `, on the bids of round ${run.round}` : ''}, ${run.approved ? 'approved' : 'awaiting sign-off'}. Generated ${at(report.generatedAt)}.`,
		{ color: '#57606a' }
	);
	pdf.space(4);
	pdf.caution(REPORT_CAUTION);

	pdf.heading('The event');
	pdf.fields([
		['Reference', event.reference],
		['Title', event.title],
		['Currency', currency],
		[
			'Delivery terms',
			`${event.incoterm} (Incoterms 2020)${event.deliveryPlace ? `, ${event.deliveryPlace}` : ''}`
		],
		['Bid deadline', at(event.deadline)],
		['Bids opened', at(event.openedAt)],
		['Items', formatQuantity(event.items)]
	]);

	pdf.heading('Bidders and their totals');
	pdf.paragraph(
		`Each bid's landed total over the items it prices, at its own prices and each item's whole quantity, beside what this run awards it. Amounts in ${currency}; times in ${zone}.`,
		{ color: '#57606a' }
	);
	pdf.table(
		cols(
			['Supplier', 0.3],
			['Revision', 0.1, 'right'],
			['Submitted', 0.2],
			['Items priced', 0.1, 'right'],
			['Total at own prices', 0.15, 'right'],
			['Awarded', 0.15, 'right']
		),
		report.bidders.map((b) => [
			b.withdrawn ? `${b.name} (withdrawn)` : b.name,
			String(b.revision),
			formatInZone(b.submittedAt, zone),
			`${formatQuantity(b.itemsBid)} of ${formatQuantity(event.items)}`,
			b.withdrawn ? '—' : money(b.total),
			money(b.awardedCost) +
				(b.ownCurrency
					? ` (${formatMoney(b.ownCurrency.awardedCost, b.ownCurrency.code)} ${b.ownCurrency.code} at ${b.ownCurrency.rate})`
					: '')
		]),
		'Bidders'
	);

	pdf.heading('Award rules and what each costs');
	if (!report.rules.length) pdf.paragraph('No award rules: this run awards at the lowest cost.');
	else {
		pdf.paragraph(
			report.ruleCostsKnown
				? `A rule's cost is the total with every rule minus the total without that rule; rules interact, so the running total adds them in order. Amounts in ${currency}.`
				: 'The rule costs have not been worked out for this run.',
			{ color: '#57606a' }
		);
		pdf.table(
			cols(
				['#', 0.05, 'right'],
				['Rule', 0.5],
				['Cost, other rules kept', 0.15, 'right'],
				['Added to the rules above', 0.15, 'right'],
				['Running total', 0.15, 'right']
			),
			report.rules.map((r) => [
				String(r.index + 1),
				r.text,
				money(r.cost),
				money(r.costOnTopOfEarlier),
				money(r.runningTotal)
			]),
			'Award rules'
		);
	}

	pdf.heading('The award per supplier');
	pdf.table(
		cols(
			['Supplier', 0.55],
			['Lines', 0.15, 'right'],
			['Quantity', 0.15, 'right'],
			[`${costWord} (${currency})`, 0.15, 'right']
		),
		[
			...report.supplierTotals.map((t) => [
				t.supplier,
				formatQuantity(t.items),
				formatQuantity(t.quantity),
				money(t.cost)
			]),
			['Total', '', '', money(totals.totalCost)],
			...(totals.priceTotal === null
				? []
				: [['Total at the suppliers’ prices', '', '', money(totals.priceTotal)]])
		],
		'The award per supplier'
	);
	if (report.evaluatedCosts) {
		pdf.heading('Price and evaluated cost');
		pdf.paragraph(
			'The evaluated cost is the price plus the money of the event’s non-price criteria; the award minimised it. The supplier is paid the price.'
		);
		pdf.table(
			cols(
				['Supplier', 0.5],
				[`Price (${currency})`, 0.25, 'right'],
				[`Evaluated cost (${currency})`, 0.25, 'right']
			),
			report.evaluatedCosts.map((t) => [t.supplier, money(t.price), money(t.evaluated)]),
			'Price and evaluated cost'
		);
	}
	for (const total of report.supplierTotals) {
		const lines = report.awards.filter((l) => l.supplier === total.supplier);
		if (!lines.length) continue;
		pdf.subheading(
			`${total.supplier}: ${formatQuantity(lines.length)} lines, ${money(total.cost)} ${currency}${evaluated ? ' evaluated' : ''}`
		);
		pdf.table(
			cols(
				['Item', 0.3],
				['Quantity', 0.15, 'right'],
				[`${evaluated ? 'Evaluated unit cost' : 'Unit price'} (${currency})`, 0.18, 'right'],
				[`${costWord} (${currency})`, 0.18, 'right'],
				['Bundle', 0.19]
			),
			lines.map((l) => [
				l.item,
				formatQuantity(l.quantity),
				formatUnitPrice(l.unitPrice, currency),
				money(l.cost),
				l.bundle ?? ''
			]),
			total.supplier
		);
	}
	if (report.uncoveredItems.length) {
		pdf.subheading('Items not awarded');
		pdf.table(
			cols(['Item', 0.3], ['Why', 0.7]),
			report.uncoveredItems.map((u) => [u.item, u.reason]),
			'Items not awarded'
		);
	}

	pdf.heading('Savings against the baseline');
	pdf.fields([
		[`Baseline (${currency})`, money(totals.baselineCost)],
		[
			`This award${evaluated ? ' at the suppliers’ prices' : ''} (${currency})`,
			money(totals.priceTotal ?? totals.totalCost)
		],
		[
			`Savings (${currency})`,
			totals.savings === null
				? 'No baseline prices were given.'
				: `${money(totals.savings)}${totals.savingsShare === null ? '' : ` (${formatShare(totals.savingsShare)} of the baseline)`}`
		]
	]);

	pdf.heading('Compared with the lowest-cost plan');
	const lowest = report.lowestCost;
	if (!lowest) pdf.paragraph('The lowest-cost plan has no finished run to compare with.');
	else if (lowest.sameRun)
		pdf.paragraph('This run is the lowest-cost plan’s latest run: no rule adds to its cost.');
	else
		pdf.fields([
			[`Lowest cost, run ${lowest.number} (${currency})`, money(lowest.totalCost)],
			[`This award (${currency})`, money(totals.totalCost)],
			[`Difference (${currency})`, `${signed(lowest.difference)} (${formatChange(lowest.share)})`]
		]);

	pdf.heading('Manual changes');
	if (run.adjustedFrom)
		pdf.paragraph(
			`This run was changed by hand from run ${run.adjustedFrom.number}; each change below was kept as a fixed rule and the rest solved again.`
		);
	if (!report.changes.length) pdf.paragraph('No manual changes: the allocation is the solver’s.');
	else
		pdf.table(
			cols(
				['When', 0.15],
				['By', 0.13],
				['Change', 0.22],
				[`Cost (${currency})`, 0.13, 'right'],
				['Justification', 0.37]
			),
			report.changes.map((c) => [
				formatInZone(new Date(c.at), zone),
				c.by.name,
				describeChange(c),
				signed(c.costChange),
				c.justification
			]),
			'Manual changes'
		);

	if (report.excluded?.length) {
		pdf.heading('Excluded as abnormally low');
		pdf.paragraph(
			'The run was built without these lines or bids; each exclusion, the explanation asked for and the answer are in the decision trail (EU Directive 2014/24/EU Art. 69).'
		);
		for (const x of report.excluded)
			pdf.paragraph(`${x.supplier}, ${x.item === null ? 'whole bid' : `line ${x.item}`}: ${x.reason}`);
	}

	pdf.heading('Sign-off');
	pdf.paragraph(
		`The sign-off is bound to the SHA-256 of the run's problem hash followed by its result hash. Problem: ${run.problemSha256}. Result: ${run.resultSha256 ?? '—'}.`,
		{ color: '#57606a' }
	);
	report.signoffs.forEach((s, k) => {
		if (report.signoffs.length > 1) pdf.subheading(`Submission ${k + 1}`);
		pdf.fields([
			['Submitted by', s.submittedBy],
			['Submitted at', at(s.submittedAt)],
			['Justification', s.justification ?? '(none was asked for when this run was submitted)'],
			['Bound hash', s.boundHash],
			['Decision', decisionText(s)],
			...(s.decidedBy ? ([['Decided by', s.decidedBy]] as [string, string][]) : []),
			...(s.decidedAt ? ([['Decided at', at(s.decidedAt)]] as [string, string][]) : []),
			...(s.comment ? ([['Comment', s.comment]] as [string, string][]) : []),
			...(s.supersededAt
				? ([['Superseded', `${at(s.supersededAt)}: ${s.supersededReason ?? ''}`]] as [string, string][])
				: [])
		]);
	});

	pdf.heading('Notices');
	if (!report.notices.length) pdf.paragraph('No notices: they are sent when the run is approved.');
	else {
		pdf.paragraph(
			'The standstill runs from the dispatch of the notices; its end date follows the buying organisation’s setting. Standstill periods are set by local law: confirm the date locally.',
			{ color: '#57606a' }
		);
		pdf.table(
			cols(['Supplier', 0.32], ['Notice', 0.12], ['Status', 0.12], ['Sent', 0.24], ['Standstill ends', 0.2]),
			report.notices.map((n) => [
				n.supplier,
				n.kind === 'award' ? 'Award' : 'Regret',
				n.status === 'sent' ? 'Sent' : 'Queued',
				n.sentAt ? formatInZone(n.sentAt, zone) : '—',
				n.standstillEndsOn
			]),
			'Notices'
		);
		pdf.paragraph(`Times in ${zone}.`, { color: '#57606a' });
	}

	pdf.heading('Decision trail');
	pdf.fields([
		['Trail head', report.trailHead ? `entry ${report.trailHead.seq}` : 'no entries'],
		['Head hash', report.trailHead?.hash ?? '—'],
		['Report generated', at(report.generatedAt)]
	]);
	pdf.paragraph(
		'Entries after this head were written after the report. The event’s decision trail verifies the chain.',
		{ color: '#57606a' }
	);

	return pdf.finish(`${event.reference} · award report, run ${run.number}`);
}
