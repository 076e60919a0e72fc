// Accounts (admins only): list and create.
import { db } from '$lib/server/db';
import { requireAdmin } from '$lib/server/guards';
import { endpoint, json, readJson } from '$lib/server/api';
import { createUser, listUsers } from '$lib/server/users';
import { userCreateSchema } from '$lib/schemas/users';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint((event) => {
	requireAdmin(event);
	return json({ items: listUsers(db) });
});

export const POST: RequestHandler = endpoint(async (event) => {
	const admin = requireAdmin(event);
	const input = await readJson(event, userCreateSchema);
	return json(await createUser(db, input, admin.id), { status: 201 });
});
