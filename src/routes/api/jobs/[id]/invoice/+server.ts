// Issue the job's invoice (supervisors, once the job is signed off, from the approved estimate).
import { z } from 'zod';
import { db } from '$lib/server/db';
import { requireSupervisor } from '$lib/server/guards';
import { endpoint, idParam, json, readJson } from '$lib/server/api';
import { issueInvoice } from '$lib/server/invoices';
import type { RequestHandler } from './$types';

export const POST: RequestHandler = endpoint(async (event) => {
	const user = requireSupervisor(event);
	const jobId = idParam(event.params.id, 'job');
	await readJson(event, z.object({}).strict());
	return json(issueInvoice(db, jobId, user), { status: 201 });
});
