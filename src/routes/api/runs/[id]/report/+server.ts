import { api } from '$lib/server/api';
import { awardReport } from '$lib/server/reports/award-report';
import { awardReportPdf } from '$lib/server/reports/award-report-pdf';
import { awardReportWorkbook } from '$lib/server/reports/award-report-sheet';
import { RuleViolation } from '$lib/server/services/errors';

const TYPES = {
	pdf: 'application/pdf',
	xlsx: 'application/vnd.openxmlformats-officedocument.spreadsheetml.sheet'
} as const;

/** The award report of a run awaiting sign-off or approved: `?format=pdf` (the default) or `?format=xlsx`. */
export const GET = api(async (user, event) => {
	const format = event.url.searchParams.get('format') ?? 'pdf';
	if (format !== 'pdf' && format !== 'xlsx')
		throw new RuleViolation('Ask for ?format=pdf or ?format=xlsx.', 'format', 400);
	const report = await awardReport(user, event.params.id!);
	const body = format === 'pdf' ? await awardReportPdf(report) : await awardReportWorkbook(report);
	const name = `award-report-${report.event.reference.replace(/[^A-Za-z0-9._-]/g, '_')}-run-${report.run.number}.${format}`;
	return new Response(new Uint8Array(body), {
		headers: {
			'content-type': TYPES[format],
			'content-disposition': `attachment; filename="${name}"`,
			'cache-control': 'no-store'
		}
	});
});
