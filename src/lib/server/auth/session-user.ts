import type { Role } from '$lib/roles';

/** What the browser and every route may know of the signed-in user: no token, no hash. */
export interface SessionUser {
	id: number;
	name: string;
	email: string;
	role: Role;
	organisationId: string;
	organisationName: string;
}
