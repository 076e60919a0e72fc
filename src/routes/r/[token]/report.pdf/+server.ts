// The report PDF behind the customer's private link (same rules as the page: 404 otherwise).
import { DomainError } from '$lib/server/errors';
import { endpoint } from '$lib/server/api';
import { db } from '$lib/server/db';
import { resolveCustomerLink } from '$lib/server/customer-links';
import { buildReport } from '$lib/server/report';
import { renderPdf } from '$lib/server/pdf-renderer';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint(async (event) => {
	const link = resolveCustomerLink(db, event.params.token, 'report');
	if (!link) throw new DomainError('not-found', 'Not found');
	const pdf = await renderPdf({ kind: 'report', model: buildReport(db, link.jobId) });
	return new Response(new Uint8Array(pdf), {
		headers: {
			'content-type': 'application/pdf',
			'content-disposition': `inline; filename="service-report-${link.jobId}.pdf"`,
			'cache-control': 'no-store',
			'referrer-policy': 'no-referrer',
			'x-robots-tag': 'noindex'
		}
	});
});
