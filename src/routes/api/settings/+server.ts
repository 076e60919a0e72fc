// Shop settings: everyone signed in reads them (the bench needs the bridge URL and mains
// frequency); admins change them.
import { db } from '$lib/server/db';
import { requireAdmin, requireUser } from '$lib/server/guards';
import { endpoint, json, readJson } from '$lib/server/api';
import { getSettings, updateSettings } from '$lib/server/settings';
import { settingsPatchSchema } from '$lib/schemas/settings';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint((event) => {
	requireUser(event);
	return json(getSettings(db));
});

export const PATCH: RequestHandler = endpoint(async (event) => {
	const admin = requireAdmin(event);
	const patch = await readJson(event, settingsPatchSchema);
	return json(updateSettings(db, patch, admin.id));
});
