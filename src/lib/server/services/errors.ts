/** A request that breaks a rule of the trade or of the app: shown to the user as it is worded. */
export class RuleViolation extends Error {
	constructor(
		message: string,
		readonly field?: string,
		readonly status: 400 | 403 | 404 | 409 | 422 = 400
	) {
		super(message);
		this.name = 'RuleViolation';
	}
}
