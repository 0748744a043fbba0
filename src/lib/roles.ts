// Roles of Tenderloom and what each one sees first. Shared by server and pages.
export const ROLES = ['admin', 'buyer', 'approver', 'supplier', 'auditor'] as const;
export type Role = (typeof ROLES)[number];

/** Staff belong to the buying organisation and may sign in by password; suppliers only by e-mail link. */
export const STAFF_ROLES: readonly Role[] = ['admin', 'buyer', 'approver', 'auditor'];

export const isStaff = (role: Role) => STAFF_ROLES.includes(role);

export const roleNames: Record<Role, string> = {
	admin: 'Administrator',
	buyer: 'Buyer',
	approver: 'Approver',
	supplier: 'Supplier',
	auditor: 'Auditor'
};

export const roleDuties: Record<Role, string> = {
	admin: 'Invite users, set their roles and deactivate accounts.',
	buyer:
		'Set up sourcing events, open bids at the deadline, build award plans and submit an award run for sign-off.',
	approver:
		'Review award runs submitted by buyers, then approve or return them. You cannot approve your own work.',
	supplier:
		'Read the events you are invited to, ask questions, and submit or revise your bid until the deadline.',
	auditor: 'Read closed events and their decision trail. Nothing can be changed from this role.'
};

export const homePath: Record<Role, string> = {
	admin: '/admin',
	buyer: '/buyer',
	approver: '/approver',
	supplier: '/supplier',
	auditor: '/audit'
};

export interface NavLink {
	href: string;
	label: string;
}

export const navigation: Record<Role, NavLink[]> = {
	admin: [
		{ href: '/admin', label: 'Home' },
		{ href: '/admin/users', label: 'Users' }
	],
	buyer: [
		{ href: '/buyer', label: 'Home' },
		{ href: '/buyer/events', label: 'Events' }
	],
	approver: [{ href: '/approver', label: 'Home' }],
	supplier: [
		{ href: '/supplier', label: 'Home' },
		{ href: '/supplier/events', label: 'Events' }
	],
	auditor: [{ href: '/audit', label: 'Home' }]
};
