// Sign-out (POST only): the session ends on the server and the cookie is cleared.
import { redirect } from '@sveltejs/kit';
import { db } from '$lib/server/db';
import { cookieSecureFor, deleteSessionCookie, signOut } from '$lib/server/auth';
import { formActions, pageLoad } from '$lib/server/handlers';
import type { Actions, PageServerLoad } from './$types';

// A GET must not sign anyone out (a link or an image could do it); send it home.
export const load: PageServerLoad = pageLoad(() => {
	redirect(303, '/');
});

export const actions: Actions = formActions({
	default: async ({ locals, cookies, url }) => {
		if (locals.session) await signOut(db, locals.session.id);
		deleteSessionCookie(cookies, cookieSecureFor(url));
		redirect(303, '/login');
	}
});
