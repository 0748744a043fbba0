// The demo sign-ins of the invented scenario in the README. Names, firms and addresses are made up;
// `.test` is a top-level domain reserved for testing (RFC 2606), so no message can reach a real inbox.
export const DEMO_PASSWORD = 'loom-demo-2027';

export const BUYING_ORGANISATION = 'Fernhollow Provisions';

export interface DemoAccount {
	email: string;
	name: string;
	role: 'admin' | 'buyer' | 'approver' | 'supplier' | 'auditor';
	organisation: string;
	/** Staff sign in by password; supplier users by an e-mail link. */
	password: boolean;
	tags?: string[];
}

export const demoAccounts: DemoAccount[] = [
	{
		email: 'buyer@fernhollow.test',
		name: 'Ines Marlow',
		role: 'buyer',
		organisation: BUYING_ORGANISATION,
		password: true
	},
	{
		email: 'buyer2@fernhollow.test',
		name: 'Tomas Brydon',
		role: 'buyer',
		organisation: BUYING_ORGANISATION,
		password: true
	},
	{
		email: 'approver@fernhollow.test',
		name: 'Hedda Corran',
		role: 'approver',
		organisation: BUYING_ORGANISATION,
		password: true
	},
	{
		email: 'admin@fernhollow.test',
		name: 'Piet Amsel',
		role: 'admin',
		organisation: BUYING_ORGANISATION,
		password: true
	},
	{
		email: 'auditor@fernhollow.test',
		name: 'Runa Falk',
		role: 'auditor',
		organisation: BUYING_ORGANISATION,
		password: true
	},
	{
		email: 'bids@brackwater-board.test',
		name: 'Colm Vesey',
		role: 'supplier',
		organisation: 'Brackwater Board',
		password: false
	},
	{
		email: 'bids@quillmere-films.test',
		name: 'Ysolde Penn',
		role: 'supplier',
		organisation: 'Quillmere Films',
		password: false
	},
	{
		email: 'bids@tarnhold-plastics.test',
		name: 'Arvid Leck',
		role: 'supplier',
		organisation: 'Tarnhold Plastics',
		password: false
	},
	{
		email: 'bids@oskvale-supply.test',
		name: 'Mira Okafor-Lund',
		role: 'supplier',
		organisation: 'Osk & Vale Supply',
		password: false
	},
	{
		email: 'bids@lindenreach-hygiene.test',
		name: 'Bea Thorne',
		role: 'supplier',
		organisation: 'Linden Reach Hygiene',
		password: false
	},
	{
		email: 'bids@corrow-packaging.test',
		name: 'Dario Fenn',
		role: 'supplier',
		organisation: 'Corrow Packaging',
		password: false
	},
	{
		email: 'bids@harlowfen-trading.test',
		name: 'Noor Haskett',
		role: 'supplier',
		organisation: 'Harlow Fen Trading',
		password: false
	},
	{
		email: 'bids@sallowpoint.test',
		name: 'Lev Ambrose',
		role: 'supplier',
		organisation: 'Sallow Point Industries',
		password: false
	}
];
