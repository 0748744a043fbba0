import type { SessionUser } from '$lib/server/auth/session-user';

declare global {
	namespace App {
		interface Error {
			message: string;
			/** The id under which the server logged this error; shown to the user for support. */
			errorId: string;
		}
		interface Locals {
			/** The signed-in user, re-read from the database on each request; null when anonymous. */
			user: SessionUser | null;
		}
		interface PageData {
			user?: SessionUser | null;
			cautions?: import('$lib/cautions').CautionKey[];
		}
	}
}

export {};
