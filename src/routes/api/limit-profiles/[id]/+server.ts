// One limit profile: read (signed in), change or remove (supervisors and admins). A profile that
// snapshots refer to is archived instead of deleted.
import { error } from '@sveltejs/kit';
import { db } from '$lib/server/db';
import { requireSupervisor, requireUser } from '$lib/server/guards';
import { idParam, json, readJson, requireSameOrigin } from '$lib/server/api';
import {
	deleteLimitProfile,
	getLimitProfile,
	LimitProfileError,
	updateLimitProfile
} from '$lib/server/limits';
import { profilePatchSchema } from '$lib/limits';
import type { RequestHandler } from './$types';

function fail(e: unknown): never {
	if (e instanceof LimitProfileError) error(e.code === 'not-found' ? 404 : 409, e.message);
	throw e;
}

export const GET: RequestHandler = (event) => {
	requireUser(event);
	const profile = getLimitProfile(db, idParam(event.params.id, 'limit profile'));
	if (!profile) error(404, 'No such limit profile');
	return json(profile);
};

export const PATCH: RequestHandler = async (event) => {
	requireSupervisor(event);
	const id = idParam(event.params.id, 'limit profile');
	const patch = await readJson(event, profilePatchSchema);
	try {
		return json(updateLimitProfile(db, id, patch));
	} catch (e) {
		fail(e);
	}
};

export const DELETE: RequestHandler = (event) => {
	requireSupervisor(event);
	requireSameOrigin(event);
	const id = idParam(event.params.id, 'limit profile');
	try {
		return json(deleteLimitProfile(db, id));
	} catch (e) {
		fail(e);
	}
};
