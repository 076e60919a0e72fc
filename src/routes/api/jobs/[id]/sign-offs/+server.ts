// A job's signatures, newest first, each with whether a reopening superseded it; the standing
// approval (if any) with its hash recomputed now (`check.intact`, `check.differences`).
import { db } from '$lib/server/db';
import { DomainError } from '$lib/server/errors';
import { requireUser } from '$lib/server/guards';
import { endpoint, idParam, json } from '$lib/server/api';
import { jobExists } from '$lib/server/jobs';
import { listSignOffs, standingSignOff } from '$lib/server/sign-off';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint((event) => {
	requireUser(event);
	const id = idParam(event.params.id, 'job');
	if (!jobExists(db, id)) throw new DomainError('not-found', 'No such job');
	const standing = standingSignOff(db, id);
	return json({ items: listSignOffs(db, id), standing: standing ? standing.check : null });
});
