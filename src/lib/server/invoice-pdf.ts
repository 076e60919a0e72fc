// The invoice as a PDF, drawn from plain data with the report's PDF helpers (so it can run on
// the PDF worker thread): the shop, the invoiced lines and totals, what was received, the balance.
import { documentHeader, heading, openDocument, paragraph, table as pdfTable } from './report-pdf';
import { formatMoney } from '$lib/money';
import type { InvoiceDocument } from './payments';

export interface InvoicePdfModel {
	jobId: number;
	document: InvoiceDocument;
	shop: { name: string; address: string; phone: string; email: string; footer: string };
	receivedMinor: number;
	payments: { receivedAt: string; methodLabel: string; kind: string; amountMinor: number }[];
}

const LINE_KIND_LABELS: Record<string, string> = {
	labour: 'Labour',
	part: 'Part',
	fixed: 'Fixed price',
	fee: 'Fee'
};

export async function drawInvoicePdf(m: InvoicePdfModel): Promise<Buffer> {
	const d = m.document;
	const fmt = (n: number) => formatMoney(n, d.currency);
	const { doc, done } = openDocument({
		title: `Invoice ${d.invoiceNumber} — job ${m.jobId}`,
		author: m.shop.name,
		subject: 'Invoice',
		createdAt: new Date(d.issuedAt)
	});
	documentHeader(doc, m.shop, `Invoice ${d.invoiceNumber}`);
	paragraph(doc, `Issued ${d.issuedAt.slice(0, 10)} to ${d.customerName} · ${d.unit} · job ${m.jobId}`);
	paragraph(doc, `From estimate version ${d.version}, approved by the customer.`, { muted: true });
	heading(doc, 'Work and parts');
	pdfTable(
		doc,
		['Item', 'Kind', 'Amount'],
		d.lines.map((l) => [l.description, LINE_KIND_LABELS[l.kind] ?? l.kind, fmt(l.amountMinor)]),
		[0.6, 0.18, 0.22]
	);
	const tax = `Tax ${(d.taxRateBasisPoints / 100).toFixed(2).replace(/\.00$/, '')} %${d.pricesIncludeTax ? ' (included in the prices)' : ''}`;
	pdfTable(
		doc,
		['', 'Amount'],
		[
			['Net', fmt(d.totals.netMinor)],
			[tax, fmt(d.totals.taxMinor)],
			['Total', fmt(d.totals.grossMinor)],
			['Received', fmt(m.receivedMinor)],
			['Balance due', fmt(Math.max(0, d.totals.grossMinor - m.receivedMinor))]
		],
		[0.78, 0.22]
	);
	if (m.payments.length) {
		heading(doc, 'Payments');
		pdfTable(
			doc,
			['Date', 'Method', 'Kind', 'Amount'],
			m.payments.map((p) => [p.receivedAt.slice(0, 10), p.methodLabel, p.kind, fmt(p.amountMinor)]),
			[0.2, 0.3, 0.2, 0.3]
		);
	}
	if (m.shop.footer) paragraph(doc, m.shop.footer, { muted: true });
	doc.end();
	return done;
}
