// The job's invoice as a PDF (signed-in staff); 404 until it is issued.
import { db } from '$lib/server/db';
import { requireUser } from '$lib/server/guards';
import { endpoint, idParam } from '$lib/server/api';
import { DomainError } from '$lib/server/errors';
import { renderInvoicePdf } from '$lib/server/invoices';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint(async (event) => {
	requireUser(event);
	const id = idParam(event.params.id, 'job');
	const invoice = await renderInvoicePdf(db, id);
	if (!invoice) throw new DomainError('not-found', 'No invoice has been issued for this job yet');
	return new Response(new Uint8Array(invoice.pdf), {
		headers: {
			'content-type': 'application/pdf',
			'content-disposition': `inline; filename="invoice-${invoice.number}.pdf"`,
			'cache-control': 'no-store'
		}
	});
});
