// A job's bench procedures: list them, or record one (conditions and raw per-step readings; the
// server computes the figures and the verdict itself, see $lib/server/procedures).
import { z } from 'zod';
import { db } from '$lib/server/db';
import { DomainError } from '$lib/server/errors';
import { requireUser } from '$lib/server/guards';
import { endpoint, idParam, json, readJson, readQuery } from '$lib/server/api';
import { jobExists } from '$lib/server/jobs';
import { listProcedureRuns, recordProcedureRun } from '$lib/server/procedures';
import { PROCEDURE_KINDS, procedureRunSchema } from '$lib/schemas/procedures';
import type { RequestHandler } from './$types';

const querySchema = z.object({ kind: z.enum(PROCEDURE_KINDS).optional() });

export const GET: RequestHandler = endpoint((event) => {
	requireUser(event);
	const jobId = idParam(event.params.id, 'job');
	if (!jobExists(db, jobId)) throw new DomainError('not-found', 'No such job');
	const q = readQuery(event.url, querySchema);
	return json({ procedures: listProcedureRuns(db, jobId, { kind: q.kind }) });
});

export const POST: RequestHandler = endpoint(async (event) => {
	const user = requireUser(event);
	const jobId = idParam(event.params.id, 'job');
	const input = await readJson(event, procedureRunSchema);
	return json(recordProcedureRun(db, jobId, user.id, input), { status: 201 });
});
