// The root only routes: the queue when signed in, the sign-in page otherwise.
import { redirect } from '@sveltejs/kit';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = ({ locals }) => {
	redirect(303, locals.user ? '/jobs' : '/login');
};
