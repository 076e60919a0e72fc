// Limit profiles page: everyone signed in may read them; supervisors and admins edit (through the JSON API).
import { db } from '$lib/server/db';
import { requireUser } from '$lib/server/guards';
import { listLimitProfiles } from '$lib/server/limit-profiles';
import { pageLoad } from '$lib/server/handlers';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = pageLoad((event) => {
	const user = requireUser(event);
	return {
		profiles: listLimitProfiles(db, { includeArchived: true }),
		canEdit: user.role === 'supervisor' || user.role === 'admin'
	};
});
