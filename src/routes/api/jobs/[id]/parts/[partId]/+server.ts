// Edit a job's part (state ordered → received → fitted, cost, verification note) or remove it.
import { db } from '$lib/server/db';
import { requireUser } from '$lib/server/guards';
import { endpoint, idParam, json, readJson, requireSameOrigin } from '$lib/server/api';
import { deletePart, updatePart } from '$lib/server/jobs';
import { partPatchSchema } from '$lib/schemas/jobs';
import type { RequestHandler } from './$types';

export const PATCH: RequestHandler = endpoint(async (event) => {
	const user = requireUser(event);
	const jobId = idParam(event.params.id, 'job');
	const partId = idParam(event.params.partId, 'part');
	const patch = await readJson(event, partPatchSchema);
	return json(updatePart(db, jobId, partId, patch, user.id));
});

export const DELETE: RequestHandler = endpoint((event) => {
	const user = requireUser(event);
	requireSameOrigin(event);
	deletePart(db, idParam(event.params.id, 'job'), idParam(event.params.partId, 'part'), user.id);
	return new Response(null, { status: 204 });
});
