// Hands the signed-in user (or null) to every page for the shell. Not a guard: each page's
// own load and actions call requireUser/requireRole.
import type { LayoutServerLoad } from './$types';

export const load: LayoutServerLoad = ({ locals }) => {
	return { user: locals.user };
};
