// The job queue: list with search/filters/sort/pages (everyone signed in), and intake.
import { db } from '$lib/server/db';
import { requireUser } from '$lib/server/guards';
import { endpoint, json, readJson, readQuery } from '$lib/server/api';
import { createJob, listJobs } from '$lib/server/jobs';
import { jobIntakeSchema, jobListQuerySchema } from '$lib/schemas/jobs';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint((event) => {
	const user = requireUser(event);
	const query = readQuery(event.url, jobListQuerySchema);
	if (query.technician === 'me') query.technician = user.id;
	return json(listJobs(db, query));
});

export const POST: RequestHandler = endpoint(async (event) => {
	const user = requireUser(event);
	const input = await readJson(event, jobIntakeSchema);
	return json(createJob(db, input, user.id), { status: 201 });
});
