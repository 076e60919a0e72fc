// The PDF worker's entry: draws the customer report and the invoice from plain data with pdfkit,
// off the request thread (a report takes a few hundred milliseconds of CPU). Bundled into one
// script by the `?node-worker` Vite plugin (vite.config.ts); the fonts come in workerData because
// a bundled script cannot find package files.
import { parentPort, workerData } from 'node:worker_threads';
import { renderReportPdf, usePdfFonts, type PdfFonts } from './report-pdf';
import { drawInvoicePdf } from './invoice-pdf';
import type { PdfReply, PdfTask } from './pdf-renderer';

const port = parentPort;
if (!port) throw new Error('pdf.worker runs only as a worker thread');
usePdfFonts((workerData as { fonts: PdfFonts }).fonts);

port.on('message', async (task: PdfTask & { id: number }) => {
	let reply: PdfReply;
	try {
		const pdf = task.kind === 'report' ? await renderReportPdf(task.model) : await drawInvoicePdf(task.model);
		const bytes = new Uint8Array(pdf.buffer, pdf.byteOffset, pdf.byteLength).slice();
		reply = { id: task.id, ok: true, pdf: bytes };
		port.postMessage(reply, [bytes.buffer]);
		return;
	} catch (e) {
		reply = { id: task.id, ok: false, message: e instanceof Error ? e.message : String(e) };
	}
	port.postMessage(reply);
});
