// One limit profile: read (signed in), change or remove (supervisors and admins). A profile that
// snapshots refer to is archived instead of deleted.
import { db } from '$lib/server/db';
import { DomainError } from '$lib/server/errors';
import { requireSupervisor, requireUser } from '$lib/server/guards';
import { endpoint, idParam, json, readJson, requireSameOrigin } from '$lib/server/api';
import { deleteLimitProfile, getLimitProfile, updateLimitProfile } from '$lib/server/limit-profiles';
import { profilePatchSchema } from '$lib/limit-profiles';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint((event) => {
	requireUser(event);
	const profile = getLimitProfile(db, idParam(event.params.id, 'limit profile'));
	if (!profile) throw new DomainError('not-found', 'No such limit profile');
	return json(profile);
});

export const PATCH: RequestHandler = endpoint(async (event) => {
	const user = requireSupervisor(event);
	const id = idParam(event.params.id, 'limit profile');
	const patch = await readJson(event, profilePatchSchema);
	return json(updateLimitProfile(db, id, patch, user.id));
});

export const DELETE: RequestHandler = endpoint((event) => {
	const user = requireSupervisor(event);
	requireSameOrigin(event);
	const id = idParam(event.params.id, 'limit profile');
	return json(deleteLimitProfile(db, id, user.id));
});
