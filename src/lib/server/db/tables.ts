// Row types of the tables, as the database returns them.
import type { Role } from '$lib/roles';

export type OrganisationKind = 'buyer' | 'supplier';

export interface OrganisationRow {
	id: string;
	name: string;
	kind: OrganisationKind;
	created_at: Date;
}

export interface UserRow {
	id: number;
	name: string | null;
	email: string;
	emailVerified: Date | null;
	image: string | null;
	role: Role;
	organisation_id: string;
	organisation_kind: OrganisationKind;
	password_hash: string | null;
	deactivated_at: Date | null;
	invited_by: number | null;
	created_at: Date;
}

export interface AccountEventRow {
	id: string;
	at: Date;
	actor_user_id: number | null;
	subject_user_id: number | null;
	action: string;
	detail: Record<string, unknown>;
	ip: string | null;
}
