// The shell's "Limit profiles" link points here; the page lives at /limit-profiles.
import { redirect } from '@sveltejs/kit';
import { requireUser } from '$lib/server/guards';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = (event) => {
	requireUser(event);
	redirect(308, '/limit-profiles');
};
