// The customer report of a job as a PDF (signed-in staff).
import { db } from '$lib/server/db';
import { requireUser } from '$lib/server/guards';
import { endpoint, idParam } from '$lib/server/api';
import { buildReport } from '$lib/server/report';
import { renderPdf } from '$lib/server/pdf-renderer';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint(async (event) => {
	requireUser(event);
	const id = idParam(event.params.id, 'job');
	const pdf = await renderPdf({ kind: 'report', model: buildReport(db, id) });
	return new Response(new Uint8Array(pdf), {
		headers: {
			'content-type': 'application/pdf',
			'content-disposition': `inline; filename="report-job-${id}.pdf"`,
			'cache-control': 'no-store'
		}
	});
});
