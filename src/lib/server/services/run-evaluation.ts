// What every page of a run shows beside its allocation once issue 14's evaluation is in: each awarded
// supplier's price and evaluated cost (where the run carries criteria money) and its total in its own bid
// currency (where it bid in another). One place, so the buyer's, the approver's and the auditor's pages
// show the same figures.
import { formatMoney } from '$lib/format';
import type { SessionUser } from '../auth/session-user';
import { runEvaluatedTotals } from './criteria';
import { runOwnCurrencies } from './currencies';

export interface RunEvaluation {
	/** Price and evaluated cost per awarded supplier, formatted; null where the run has no criteria money. */
	evaluatedCosts: { supplier: string; price: string; evaluated: string }[] | null;
	/** The award at the suppliers' own prices, where the run minimised evaluated cost; else null. */
	priceTotal: number | null;
	/** By supplier name: its awarded total in its own currency, for suppliers that bid in another. */
	ownCurrencies: Record<string, { code: string; rate: number; total: string }>;
}

/** For staff who may see the run (both services check it); nothing before the run is done. */
export async function runEvaluation(
	user: SessionUser,
	run: { id: string; status: string },
	eventId: string
): Promise<RunEvaluation> {
	if (run.status !== 'done') return { evaluatedCosts: null, priceTotal: null, ownCurrencies: {} };
	const [evaluated, ownCurrencies] = await Promise.all([
		runEvaluatedTotals(user, run.id, eventId),
		runOwnCurrencies(user, run.id, eventId)
	]);
	return {
		evaluatedCosts:
			evaluated?.totals.map((t) => ({
				supplier: t.supplier,
				price: formatMoney(t.price, evaluated.currency),
				evaluated: formatMoney(t.evaluated, evaluated.currency)
			})) ?? null,
		priceTotal: evaluated ? evaluated.totals.reduce((sum, t) => sum + t.price, 0) : null,
		ownCurrencies
	};
}
