// Soak events from the page: gap markers, THD+N samples, generator changes and notes.
import { db } from '$lib/server/db';
import { requireUser } from '$lib/server/guards';
import { endpoint, idParam, json, readJson } from '$lib/server/api';
import { addEvents, eventsBodySchema } from '$lib/server/soak';
import type { RequestHandler } from './$types';

export const POST: RequestHandler = endpoint(async (event) => {
	requireUser(event);
	const id = idParam(event.params.id, 'soak run');
	const body = await readJson(event, eventsBodySchema, 256 * 1024);
	return json(addEvents(db, id, body.events));
});
