// A model's typical figures as CSV: one row per set of conditions, each figure's median,
// quartiles, range and units, the unit in every header.
import { db } from '$lib/server/db';
import { requireUser } from '$lib/server/guards';
import { endpoint } from '$lib/server/api';
import { getNotebook, typicalCsv } from '$lib/server/notebook';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint((event) => {
	requireUser(event);
	const nb = getNotebook(db, event.params.make, event.params.model);
	return new Response(typicalCsv(nb.typical), {
		headers: {
			'content-type': 'text/csv; charset=utf-8; header=present',
			'content-disposition': `attachment; filename="${nb.key.replace(/[^a-z0-9]/g, '-')}-typical-figures.csv"`,
			'x-content-type-options': 'nosniff',
			'cache-control': 'private, no-store'
		}
	});
});
