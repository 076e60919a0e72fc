// See https://svelte.dev/docs/kit/types#app.d.ts
import type { SessionUser, SessionInfo } from '$lib/server/auth';

declare global {
	namespace App {
		interface Locals {
			user: SessionUser | null;
			session: SessionInfo | null;
		}
		interface Error {
			message: string;
			issues?: unknown;
		}
	}
}

export {};
