// Sign-in page: a fresh session on success (ending this browser's previous one), one generic
// message on any failure, and a clear wait when this e-mail and address, or this address, must
// slow down. The client address honours TRUSTED_PROXY.
import { fail, redirect } from '@sveltejs/kit';
import { db } from '$lib/server/db';
import {
	clientAddress,
	cookieSecureFor,
	setSessionCookie,
	signIn,
	SIGN_IN_FAILED_MESSAGE,
	waitText
} from '$lib/server/auth';
import { signInSchema } from '$lib/schemas/users';
import { safeNext } from '$lib/safe-next';
import { formActions, pageLoad } from '$lib/server/handlers';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = pageLoad((event) => {
	const next = safeNext(event.url.searchParams.get('next'));
	if (event.locals.user) redirect(303, next);
	return { next };
});

export const actions: Actions = formActions({
	default: async (event) => {
		const form = await event.request.formData();
		const next = safeNext(form.get('next'));
		const raw = { email: form.get('email'), password: form.get('password') };
		const email = typeof raw.email === 'string' ? raw.email.slice(0, 254) : '';
		const parsed = signInSchema.safeParse(raw);
		if (!parsed.success) return fail(400, { email, message: SIGN_IN_FAILED_MESSAGE, limited: false });

		const result = await signIn(db, {
			...parsed.data,
			ip: clientAddress(event),
			previousSessionId: event.locals.session?.id ?? null
		});
		if (!result.ok) {
			if (result.reason === 'rate-limited') {
				event.setHeaders({ 'retry-after': String(result.retryAfterS) });
				return fail(429, {
					email,
					message: `Too many failed sign-ins. Wait ${waitText(result.retryAfterS)} and try again.`,
					limited: true
				});
			}
			return fail(400, { email, message: SIGN_IN_FAILED_MESSAGE, limited: false });
		}
		setSessionCookie(event.cookies, result.token, result.expiresAt, cookieSecureFor(event.url));
		redirect(303, next);
	}
});
