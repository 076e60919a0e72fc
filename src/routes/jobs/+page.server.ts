// The job queue's first paint: the page's query string parsed the same way as
// GET /api/jobs, so a reload shows what the table showed; later changes are fetched.
import { db } from '$lib/server/db';
import { requireUser } from '$lib/server/guards';
import { listJobs } from '$lib/server/jobs';
import { listAssignableUsers } from '$lib/server/users';
import { jobListQuerySchema } from '$lib/schemas/jobs';
import { pageLoad } from '$lib/server/handlers';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = pageLoad((event) => {
	const user = requireUser(event);
	const raw = Object.fromEntries(event.url.searchParams);
	// A hand-edited, invalid query string falls back to the plain queue rather than an error page.
	const parsed = jobListQuerySchema.safeParse(raw);
	const query = parsed.success ? parsed.data : jobListQuerySchema.parse({});
	const technician = query.technician === 'me' ? user.id : query.technician;
	const list = listJobs(db, { ...query, technician });
	const str = (key: string) => (parsed.success && typeof raw[key] === 'string' ? raw[key] : '');
	return {
		list,
		filters: {
			q: str('q'),
			status: str('status'),
			technician: str('technician'),
			sort: query.sort as string,
			page: list.page,
			pageSize: list.pageSize
		},
		technicians: listAssignableUsers(db)
	};
});
