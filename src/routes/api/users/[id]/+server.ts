// One account (admins only): rename, change role, deactivate/reactivate (sessions end),
// or set a new password.
import { db } from '$lib/server/db';
import { DomainError } from '$lib/server/errors';
import { requireAdmin } from '$lib/server/guards';
import { endpoint, json, readJson } from '$lib/server/api';
import { isUserId, updateUser } from '$lib/server/users';
import { userPatchSchema } from '$lib/schemas/users';
import type { RequestHandler } from './$types';

export const PATCH: RequestHandler = endpoint(async (event) => {
	const admin = requireAdmin(event);
	const id = event.params.id;
	if (!isUserId(id)) throw new DomainError('not-found', 'No such user');
	const patch = await readJson(event, userPatchSchema);
	if (id === admin.id && patch.active === false)
		throw new DomainError('conflict', 'You cannot deactivate your own account');
	return json(await updateUser(db, id, patch, admin.id));
});
