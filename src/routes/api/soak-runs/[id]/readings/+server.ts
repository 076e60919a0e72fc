// Soak readings: upload a batch (idempotent on run + probe + seq; invalid readings are named in a
// 400 while the valid rest is stored) and read back those after a seq.
import { z } from 'zod';
import { db } from '$lib/server/db';
import { requireUser } from '$lib/server/guards';
import { endpoint, idParam, json, readJson, readQuery } from '$lib/server/api';
import {
	addReadings,
	readingsAfter,
	readingsBodySchema,
	readingsTail,
	READINGS_BODY_MAX_BYTES
} from '$lib/server/soak';
import type { RequestHandler } from './$types';

const querySchema = z.object({
	after: z.coerce.number().int().min(-1).default(-1),
	limit: z.coerce.number().int().min(1).max(20_000).default(5000),
	/** Instead of a page after a seq: the newest `tail` readings (a page resuming a long run). */
	tail: z.coerce.number().int().min(1).max(20_000).optional()
});

export const GET: RequestHandler = endpoint((event) => {
	requireUser(event);
	const id = idParam(event.params.id, 'soak run');
	const q = readQuery(event.url, querySchema);
	const page = q.tail !== undefined ? readingsTail(db, id, q.tail) : readingsAfter(db, id, q.after, q.limit);
	return json(page, { headers: { 'cache-control': 'no-store' } });
});

export const POST: RequestHandler = endpoint(async (event) => {
	requireUser(event);
	const id = idParam(event.params.id, 'soak run');
	const body = await readJson(event, readingsBodySchema, READINGS_BODY_MAX_BYTES);
	const res = addReadings(db, id, body.readings, body.bootId);
	if (res.rejected.length) {
		const message = `${res.rejected.length} reading(s) rejected; ${res.stored} new reading(s) stored`;
		return json({ message, ...res }, { status: 400 });
	}
	return json(res);
});
