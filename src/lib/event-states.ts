// An event's states in the words every page uses (the badge, the trail, the homes).
export const stateNames: Record<string, string> = {
	draft: 'Draft',
	open: 'Open for bids',
	closed: 'Closed, bids opened',
	in_evaluation: 'In evaluation',
	awaiting_signoff: 'Awaiting sign-off',
	awarded: 'Awarded',
	cancelled: 'Cancelled'
};
