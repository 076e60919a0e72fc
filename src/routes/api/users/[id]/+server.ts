// One account (admins only): rename, change role, deactivate/reactivate (sessions end),
// or set a new password.
import { error } from '@sveltejs/kit';
import { db } from '$lib/server/db';
import { requireAdmin } from '$lib/server/guards';
import { json, readJson } from '$lib/server/api';
import { isUserId, updateUser } from '$lib/server/users';
import { userPatchSchema } from '$lib/schemas/users';
import type { RequestHandler } from './$types';

export const PATCH: RequestHandler = async (event) => {
	const admin = requireAdmin(event);
	const id = event.params.id;
	if (!isUserId(id)) error(404, 'No such user');
	const patch = await readJson(event, userPatchSchema);
	if (id === admin.id && patch.active === false) error(409, 'You cannot deactivate your own account');
	return json(await updateUser(db, id, patch));
};
