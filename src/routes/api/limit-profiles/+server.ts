// Limit profiles: everyone signed in reads them (the bench picks one); supervisors and admins create.
import { error } from '@sveltejs/kit';
import { z } from 'zod';
import { db } from '$lib/server/db';
import { requireSupervisor, requireUser } from '$lib/server/guards';
import { json, readJson, readQuery } from '$lib/server/api';
import { createLimitProfile, listLimitProfiles, LimitProfileError } from '$lib/server/limits';
import { profileInputSchema } from '$lib/limits';
import type { RequestHandler } from './$types';

const querySchema = z.object({ archived: z.enum(['0', '1']).optional() });

export const GET: RequestHandler = (event) => {
	requireUser(event);
	const q = readQuery(event.url, querySchema);
	return json({ profiles: listLimitProfiles(db, { includeArchived: q.archived === '1' }) });
};

export const POST: RequestHandler = async (event) => {
	const user = requireSupervisor(event);
	const input = await readJson(event, profileInputSchema);
	try {
		return json(createLimitProfile(db, input, user.id), { status: 201 });
	} catch (e) {
		if (e instanceof LimitProfileError && e.code === 'name-taken') error(409, e.message);
		throw e;
	}
};
