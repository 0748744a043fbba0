// The cautions Tenderloom shows where its work can harm a supplier or the buying organisation.
// Pages list the keys they need in their data (`cautions`); the app shell shows the texts.
export const cautions = {
	decisionSupport:
		'An optimised allocation is decision support, not a legal award. Public buyers must award on the published criteria and may use only award rules announced before bids arrived. Defer to your procurement law and counsel.',
	standstill:
		'Standstill and notice periods are set by local law and differ between jurisdictions. Confirm the dates with your legal team before signing a contract.',
	rankReversal:
		'Relative price-scoring formulas can reverse the ranking of two bids when a third bid is added or removed. Prefer money-valued adjustments or absolute scores.',
	lateRuleChange:
		'Changing award rules after bids are in must be justified, is recorded in the decision trail, and may be open to challenge.',
	abnormallyLow:
		'A price flagged as abnormally low is a reason to ask, not to reject: ask the supplier to explain it in writing first, and reject only with a reasoned decision (EU Directive 2014/24/EU Art. 69). The screen is a statistical rule of thumb, not a legal threshold; defer to your procurement law and counsel.'
} as const;

export type CautionKey = keyof typeof cautions;
