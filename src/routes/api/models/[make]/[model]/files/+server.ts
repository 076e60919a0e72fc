// A model's documents (service manual, schematic, alignment notes): attach one or more
// (multipart, parts named `file`, typed by content like a job's files). Read and removed through
// /api/files/{id}.
import { db } from '$lib/server/db';
import { DomainError } from '$lib/server/errors';
import { requireUser } from '$lib/server/guards';
import { endpoint, json, requireSameOrigin } from '$lib/server/api';
import { multipartBoundary } from '$lib/server/multipart';
import { bodyChunks, uploadModelFiles } from '$lib/server/job-files';
import { getNotebook } from '$lib/server/notebook';
import { analyseInPool, appStore } from '$lib/server/app-store';
import type { RequestHandler } from './$types';

export const POST: RequestHandler = endpoint(async (event) => {
	const user = requireUser(event);
	requireSameOrigin(event);
	// 404 unless the shop has a record of the model: documents start with its first job.
	const { key } = getNotebook(db, event.params.make, event.params.model);
	const boundary = multipartBoundary(event.request.headers.get('content-type') ?? '');
	if (boundary === null || !event.request.body)
		throw new DomainError(
			'unsupported-type',
			'Send the files as multipart/form-data, each as a part named “file”'
		);
	const files = await uploadModelFiles(db, {
		modelKey: key,
		userId: user.id,
		body: bodyChunks(event.request.body),
		boundary,
		store: appStore(),
		analyse: analyseInPool
	});
	return json(
		{ files: files.map((f) => ({ id: f.id, name: f.name, type: f.type, bytes: f.bytes, sha256: f.sha256 })) },
		{ status: 201 }
	);
});
