// The model notebooks: every make and model the shop has seen, searched however it was typed.
import { db } from '$lib/server/db';
import { requireUser } from '$lib/server/guards';
import { pageLoad } from '$lib/server/handlers';
import { listModels } from '$lib/server/notebook';
import { modelSearchSchema } from '$lib/schemas/notebook';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = pageLoad((event) => {
	requireUser(event);
	// A hand-edited, invalid query string falls back to the plain list rather than an error page.
	const parsed = modelSearchSchema.safeParse(Object.fromEntries(event.url.searchParams));
	const query = parsed.success ? parsed.data : modelSearchSchema.parse({});
	return { list: listModels(db, query), q: query.q ?? '' };
});
