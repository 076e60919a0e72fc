// Sign-in page: a fresh session on success, one generic message on any failure, and a
// clear wait message when the per-account or per-address limit is reached.
import { fail, redirect } from '@sveltejs/kit';
import { db } from '$lib/server/db';
import { cookieSecureFor, setSessionCookie, signIn, SIGN_IN_FAILED_MESSAGE } from '$lib/server/auth';
import { signInSchema } from '$lib/schemas/users';
import { safeNext } from '$lib/safe-next';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = ({ locals, url }) => {
	const next = safeNext(url.searchParams.get('next'));
	if (locals.user) redirect(303, next);
	return { next };
};

export const actions: Actions = {
	default: async (event) => {
		const form = await event.request.formData();
		const next = safeNext(form.get('next'));
		const raw = { email: form.get('email'), password: form.get('password') };
		const email = typeof raw.email === 'string' ? raw.email.slice(0, 254) : '';
		const parsed = signInSchema.safeParse(raw);
		if (!parsed.success) return fail(400, { email, message: SIGN_IN_FAILED_MESSAGE, limited: false });

		const result = await signIn(db, { ...parsed.data, ip: event.getClientAddress() });
		if (!result.ok) {
			if (result.reason === 'rate-limited') {
				const minutes = Math.max(1, Math.ceil((result.retryAfterS ?? 60) / 60));
				return fail(429, {
					email,
					message: `Too many sign-in attempts. Wait ${minutes} minute${minutes === 1 ? '' : 's'} and try again.`,
					limited: true
				});
			}
			return fail(400, { email, message: SIGN_IN_FAILED_MESSAGE, limited: false });
		}
		setSessionCookie(event.cookies, result.token, result.expiresAt, cookieSecureFor(event.url));
		redirect(303, next);
	}
};
