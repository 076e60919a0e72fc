// The customer's private link: the report, read-only, without an account. An unknown, expired
// or revoked link is a bare 404 that says nothing about why.
import { DomainError } from '$lib/server/errors';
import { pageLoad } from '$lib/server/handlers';
import { db } from '$lib/server/db';
import { resolveCustomerLink, recordLinkView } from '$lib/server/customer-links';
import { buildReport } from '$lib/server/report';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = pageLoad((event) => {
	event.setHeaders({
		'cache-control': 'no-store',
		'referrer-policy': 'no-referrer',
		'x-robots-tag': 'noindex, nofollow'
	});
	const link = resolveCustomerLink(db, event.params.token, 'report');
	if (!link) throw new DomainError('not-found', 'Not found');
	recordLinkView(db, link.id);
	return { report: buildReport(db, link.jobId), token: event.params.token };
});
