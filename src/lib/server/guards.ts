// Guards used by every page load, form action and API route (never only a layout).
// API paths answer 401/403 JSON; pages send a signed-out visitor to /login.
import { error, redirect, type RequestEvent } from '@sveltejs/kit';
import type { Role } from './db/schema';

type GuardEvent = Pick<RequestEvent, 'locals' | 'url'>;

function isApi(event: GuardEvent): boolean {
	return event.url.pathname.startsWith('/api/');
}

/** The signed-in user, or 401 (API) / a redirect to the sign-in page (pages). */
export function requireUser(event: GuardEvent): NonNullable<App.Locals['user']> {
	const user = event.locals.user;
	if (!user) {
		if (isApi(event)) error(401, 'Sign in first');
		const next = event.url.pathname + event.url.search;
		redirect(303, `/login?next=${encodeURIComponent(next)}`);
	}
	return user;
}

/** The signed-in user when their role is one of `roles`; 403 otherwise. */
export function requireRole(event: GuardEvent, ...roles: Role[]): NonNullable<App.Locals['user']> {
	const user = requireUser(event);
	if (!roles.includes(user.role)) error(403, `This needs the ${roles.join(' or ')} role`);
	return user;
}

/** Supervisors and admins: limit profiles, approvals, sign-off. */
export const requireSupervisor = (event: GuardEvent) => requireRole(event, 'supervisor', 'admin');
/** Admins only: users and shop settings. */
export const requireAdmin = (event: GuardEvent) => requireRole(event, 'admin');
