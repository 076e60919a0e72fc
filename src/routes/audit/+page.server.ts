// The audit trail page for supervisors and admins. The entries themselves come from
// GET /api/audit in the browser (filters and pages); the load gives the people and the
// action names to filter by.
import { db } from '$lib/server/db';
import { requireSupervisor } from '$lib/server/guards';
import { listUsers } from '$lib/server/users';
import { pageLoad } from '$lib/server/handlers';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = pageLoad((event) => {
	requireSupervisor(event);
	return { people: listUsers(db).map((u) => ({ id: u.id, name: u.name })) };
});
