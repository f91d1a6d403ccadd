// See https://svelte.dev/docs/kit/types#app.d.ts
declare global {
	namespace App {
		interface Error {
			code?: string;
			message: string;
		}
		interface Locals {
			user: import('$lib/server/auth/types').SessionUser | null;
			session: import('$lib/server/auth/types').SessionInfo | null;
			/** Set when a step of the answer failed because the database was not reachable. */
			dbUnavailable?: boolean;
		}
	}
}

export {};
