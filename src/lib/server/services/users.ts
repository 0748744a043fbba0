// Who may use Tenderloom and in which role: invitations, role changes, deactivation and passwords.
import { isStaff, roleNames, type Role } from '$lib/roles';
import { createSignInLink } from '../auth/sign-in-links';
import { hashPassword, passwordProblems, verifyPassword } from '../auth/passwords';
import { endUserSessions } from '../auth/sessions';
import type { SessionUser } from '../auth/session-user';
import { recordAccountEvent } from '../db/account-events';
import { db } from '../db/knex';
import {
	buyersOfSupplier,
	findOrganisation,
	findOrganisationByName,
	insertOrganisation,
	listRelatedSuppliers
} from '../db/organisations';
import { listOpenSessions, type OpenSession } from '../db/sessions';
import {
	findManagedUser,
	findUserByEmail,
	findUserById,
	insertUser,
	listUsers,
	setPasswordHash,
	setUserDeactivated,
	updateUserRole,
	type UserWithOrganisation
} from '../db/users';
import { sendMail } from '../mail';
import { invitationMail } from '../mail/templates';
import { RuleViolation } from './errors';

export const INVITATION_HOURS = 72;

/** The users an admin manages (its organisation's staff and the suppliers it works with), and those suppliers. */
export async function managedUsers(admin: SessionUser) {
	if (admin.role !== 'admin') throw new RuleViolation('Only admins manage users.', undefined, 403);
	const [users, suppliers] = await Promise.all([
		listUsers(db(), admin.organisationId),
		listRelatedSuppliers(db(), admin.organisationId)
	]);
	return { users, suppliers };
}

/** The signed-in user's own account: whether it has a password, and its open sessions. */
export async function ownAccount(
	user: SessionUser,
	idleHours: number
): Promise<{ hasPassword: boolean; sessions: OpenSession[] }> {
	const [row, sessions] = await Promise.all([
		findUserById(db(), user.id),
		listOpenSessions(db(), user.id, idleHours)
	]);
	return { hasPassword: Boolean(row?.password_hash), sessions };
}

export interface RequestContext {
	origin: string;
	ip: string | null;
	/** The session the request was made in, when known (a password change keeps only that one). */
	sessionId?: string | null;
}

export interface Invitation {
	email: string;
	name: string;
	role: Role;
	supplierOrganisationId: string;
	newSupplierName: string;
}

export interface InvitationResult {
	user: UserWithOrganisation;
	mailed: boolean;
}

async function mailInvitation(actor: SessionUser, user: UserWithOrganisation): Promise<boolean> {
	const link = await createSignInLink(db(), {
		email: user.email,
		callbackPath: '/',
		validForHours: INVITATION_HOURS
	});
	try {
		await sendMail(
			invitationMail(user.email, {
				inviterName: actor.name,
				organisationName: user.organisation_name,
				roleName: roleNames[user.role].toLowerCase(),
				url: link.url,
				expires: link.expires
			})
		);
		return true;
	} catch (error) {
		console.error(
			JSON.stringify({ level: 'error', source: 'mail', message: (error as Error).message, to: user.email })
		);
		return false;
	}
}

/** Creates the account (and a new supplier organisation when asked) in one transaction, then mails the link. */
export async function inviteUser(
	actor: SessionUser,
	invitation: Invitation,
	context: RequestContext
): Promise<InvitationResult> {
	const email = invitation.email.trim().toLowerCase();
	const created = await db().transaction(async (trx) => {
		if (await findUserByEmail(trx, email)) {
			throw new RuleViolation(`A user with the e-mail address ${email} already exists.`, 'email', 409);
		}
		let organisationId: string;
		if (invitation.role === 'supplier') {
			if (invitation.newSupplierName) {
				if (await findOrganisationByName(trx, 'supplier', invitation.newSupplierName)) {
					throw new RuleViolation(
						`A supplier organisation named “${invitation.newSupplierName}” already exists: choose it from the list.`,
						'newSupplierName',
						409
					);
				}
				organisationId = (await insertOrganisation(trx, invitation.newSupplierName, 'supplier')).id;
			} else {
				const organisation = await findOrganisation(trx, invitation.supplierOrganisationId);
				const buyers = organisation?.kind === 'supplier' ? await buyersOfSupplier(trx, organisation.id) : [];
				if (!organisation || !buyers.includes(actor.organisationId)) {
					throw new RuleViolation(
						'Choose a supplier organisation from the list.',
						'supplierOrganisationId',
						422
					);
				}
				// A user added to a supplier sees every event it is invited to, other buyers' ones too.
				if (buyers.some((id) => id !== actor.organisationId)) {
					throw new RuleViolation(
						`${organisation.name} also works with another buying organisation, so users cannot be added to it here: invite the supplier to your event by the address of one of its users.`,
						'supplierOrganisationId',
						409
					);
				}
				organisationId = organisation.id;
			}
		} else {
			// Staff join the organisation of the admin who invites them, never another buying organisation.
			organisationId = actor.organisationId;
		}
		const row = await insertUser(trx, {
			email,
			name: invitation.name,
			role: invitation.role,
			organisationId,
			organisationKind: invitation.role === 'supplier' ? 'supplier' : 'buyer',
			invitedBy: actor.id
		});
		await recordAccountEvent(trx, {
			actorUserId: actor.id,
			subjectUserId: row.id,
			action: 'user.invited',
			detail: { role: row.role, organisationId },
			ip: context.ip
		});
		return (await findUserById(trx, row.id))!;
	});
	return { user: created, mailed: await mailInvitation(actor, created) };
}

export async function resendInvitation(
	actor: SessionUser,
	userId: number,
	_context: RequestContext
): Promise<boolean> {
	const user = await findManagedUser(db(), actor.organisationId, userId);
	if (!user) throw new RuleViolation('There is no such user.', undefined, 404);
	if (user.deactivated_at)
		throw new RuleViolation(`${user.email} is deactivated: reactivate the account first.`);
	return mailInvitation(actor, user);
}

async function targetOf(actor: SessionUser, userId: number): Promise<UserWithOrganisation> {
	if (userId === actor.id) {
		throw new RuleViolation(
			'You cannot change your own account here: ask another administrator.',
			undefined,
			403
		);
	}
	// Users of another buying organisation (and of suppliers it alone works with) do not exist for this admin.
	const user = await findManagedUser(db(), actor.organisationId, userId);
	if (!user) throw new RuleViolation('There is no such user.', undefined, 404);
	// A supplier that also works with another buying organisation is not this one's to run: deactivating
	// its user would lock it out of the other organisation's events too.
	if (user.organisation_kind === 'supplier') {
		const buyers = await buyersOfSupplier(db(), user.organisation_id);
		if (buyers.some((id) => id !== actor.organisationId)) {
			throw new RuleViolation(
				`${user.organisation_name} also works with another buying organisation, so its users cannot be deactivated or changed here. To stop it bidding on your events, remove its invitations.`,
				undefined,
				403
			);
		}
	}
	return user;
}

export async function changeRole(
	actor: SessionUser,
	userId: number,
	role: Role,
	context: RequestContext
): Promise<void> {
	const user = await targetOf(actor, userId);
	if (user.role === role) return;
	// A supplier user belongs to a supplier firm, staff to the buying organisation: a role cannot cross that line.
	if (isStaff(user.role) !== isStaff(role)) {
		throw new RuleViolation(
			user.role === 'supplier'
				? `${user.email} belongs to the supplier ${user.organisation_name}; invite staff with a staff address instead.`
				: `${user.email} is staff of ${user.organisation_name}; invite supplier users from their own organisation instead.`,
			'role'
		);
	}
	await db().transaction(async (trx) => {
		await updateUserRole(trx, user.id, role);
		await recordAccountEvent(trx, {
			actorUserId: actor.id,
			subjectUserId: user.id,
			action: 'user.role_changed',
			detail: { from: user.role, to: role },
			ip: context.ip
		});
		await endUserSessions(trx, {
			userId: user.id,
			reason: 'role changed',
			actorUserId: actor.id,
			ip: context.ip
		});
	});
}

export async function setActive(
	actor: SessionUser,
	userId: number,
	active: boolean,
	context: RequestContext
): Promise<void> {
	const user = await targetOf(actor, userId);
	if (Boolean(user.deactivated_at) === !active) return;
	await db().transaction(async (trx) => {
		await setUserDeactivated(trx, user.id, !active);
		await recordAccountEvent(trx, {
			actorUserId: actor.id,
			subjectUserId: user.id,
			action: active ? 'user.reactivated' : 'user.deactivated',
			ip: context.ip
		});
		// Reactivation too: an account comes back with no session, never with its old ones.
		await endUserSessions(trx, {
			userId: user.id,
			reason: active ? 'reactivated' : 'deactivated',
			actorUserId: actor.id,
			ip: context.ip
		});
	});
}

/** Staff set their own password; one that exists already must be given first. */
export async function setOwnPassword(
	actor: SessionUser,
	input: { currentPassword: string; newPassword: string },
	context: RequestContext
): Promise<void> {
	if (!isStaff(actor.role)) {
		throw new RuleViolation(
			'Supplier users sign in by e-mail link; passwords are for staff accounts.',
			undefined,
			403
		);
	}
	const user = await findUserById(db(), actor.id);
	if (!user) throw new RuleViolation('There is no such user.', undefined, 404);
	if (user.password_hash && !(await verifyPassword(input.currentPassword, user.password_hash))) {
		throw new RuleViolation('Your current password is not right.', 'currentPassword');
	}
	const problems = passwordProblems(input.newPassword);
	if (problems.length) throw new RuleViolation(problems.join(' '), 'newPassword');
	const hash = await hashPassword(input.newPassword);
	await db().transaction(async (trx) => {
		await setPasswordHash(trx, user.id, hash);
		await recordAccountEvent(trx, {
			actorUserId: actor.id,
			subjectUserId: user.id,
			action: 'user.password_set',
			ip: context.ip
		});
		await endUserSessions(trx, {
			userId: user.id,
			reason: 'password changed',
			actorUserId: actor.id,
			ip: context.ip,
			except: context.sessionId
		});
	});
}
