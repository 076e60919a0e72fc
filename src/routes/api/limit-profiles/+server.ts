// Limit profiles: everyone signed in reads them (the bench picks one); supervisors and admins create.
import { z } from 'zod';
import { db } from '$lib/server/db';
import { requireSupervisor, requireUser } from '$lib/server/guards';
import { endpoint, json, readJson, readQuery } from '$lib/server/api';
import { createLimitProfile, listLimitProfiles } from '$lib/server/limit-profiles';
import { profileInputSchema } from '$lib/limit-profiles';
import type { RequestHandler } from './$types';

const querySchema = z.object({ archived: z.enum(['0', '1']).optional() });

export const GET: RequestHandler = endpoint((event) => {
	requireUser(event);
	const q = readQuery(event.url, querySchema);
	return json({ profiles: listLimitProfiles(db, { includeArchived: q.archived === '1' }) });
});

export const POST: RequestHandler = endpoint(async (event) => {
	const user = requireSupervisor(event);
	const input = await readJson(event, profileInputSchema);
	return json(createLimitProfile(db, input, user.id), { status: 201 });
});
