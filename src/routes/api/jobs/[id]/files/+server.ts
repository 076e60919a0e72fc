// A job's files: list them, or attach one or more (multipart, parts named `file`). Types are
// decided by content; see $lib/server/job-files.
import { db } from '$lib/server/db';
import { DomainError } from '$lib/server/errors';
import { requireUser } from '$lib/server/guards';
import { endpoint, idParam, json, requireSameOrigin } from '$lib/server/api';
import { multipartBoundary } from '$lib/server/multipart';
import { assertJobOpen, jobExists } from '$lib/server/jobs';
import { bodyChunks, listJobFiles, uploadJobFiles } from '$lib/server/job-files';
import { analyseInPool, appStore } from '$lib/server/app-store';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint((event) => {
	requireUser(event);
	const jobId = idParam(event.params.id, 'job');
	if (!jobExists(db, jobId)) throw new DomainError('not-found', 'No such job');
	return json({ files: listJobFiles(db, jobId) });
});

export const POST: RequestHandler = endpoint(async (event) => {
	const user = requireUser(event);
	requireSameOrigin(event);
	const jobId = idParam(event.params.id, 'job');
	assertJobOpen(db, jobId);
	const boundary = multipartBoundary(event.request.headers.get('content-type') ?? '');
	if (boundary === null || !event.request.body)
		throw new DomainError(
			'unsupported-type',
			'Send the files as multipart/form-data, each as a part named “file”'
		);
	const files = await uploadJobFiles(db, {
		jobId,
		userId: user.id,
		body: bodyChunks(event.request.body),
		boundary,
		store: appStore(),
		analyse: analyseInPool
	});
	return json(
		{
			files: files.map((f) => ({
				id: f.id,
				name: f.name,
				type: f.type,
				bytes: f.bytes,
				sha256: f.sha256,
				...(f.analysis ? { analysis: f.analysis } : {}),
				...(f.analysisError ? { analysisError: f.analysisError } : {})
			}))
		},
		{ status: 201 }
	);
});
