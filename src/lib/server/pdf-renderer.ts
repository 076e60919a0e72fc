// PDFs are drawn on one worker thread, never on the request thread: pdfkit's font subsetting and
// layout take a few hundred milliseconds of CPU for a report, which would stall every other user.
// One thread (PDFs are occasional), started on first use, with a short queue: when it is full a
// request is refused at once with 503 + Retry-After. A crashed worker fails what it held and the
// next request starts a fresh one.
import { Worker } from 'node:worker_threads';
import { DomainError } from './errors';
import { pdfFonts } from './report-pdf';
import type { ReportModel } from './report';
import type { InvoicePdfModel } from './invoice-pdf';
// The worker entry bundled into one self-contained script (see the node-worker plugin in vite.config.ts).
import workerSource from './pdf.worker.ts?node-worker';

export type PdfTask = { kind: 'report'; model: ReportModel } | { kind: 'invoice'; model: InvoicePdfModel };
export type PdfReply = { id: number; ok: true; pdf: Uint8Array } | { id: number; ok: false; message: string };

/** PDFs waiting beyond the one being drawn. */
export const MAX_QUEUED_PDFS = 8;

interface Pending {
	id: number;
	task: PdfTask;
	resolve: (pdf: Buffer) => void;
	reject: (e: unknown) => void;
}

let worker: Worker | null = null;
let running: Pending | null = null;
const queue: Pending[] = [];
let nextId = 1;

function start(): Worker {
	const fonts = pdfFonts();
	const w = new Worker(workerSource, { eval: true, workerData: { fonts } });
	w.on('message', (reply: PdfReply) => {
		const job = running;
		running = null;
		if (job && job.id === reply.id) {
			if (reply.ok) job.resolve(Buffer.from(reply.pdf.buffer, reply.pdf.byteOffset, reply.pdf.byteLength));
			else job.reject(new Error(`The PDF could not be drawn: ${reply.message}`));
		}
		pump();
	});
	w.on('error', (e) => {
		// Fail what it held; the next task starts a new worker.
		running?.reject(e);
		running = null;
		worker = null;
		pump();
	});
	w.on('exit', () => {
		if (worker === w) worker = null;
	});
	return w;
}

function pump(): void {
	if (running || queue.length === 0) {
		// Idle: let the process exit (scripts, tests) without waiting for the thread.
		if (!running) worker?.unref();
		return;
	}
	worker ??= start();
	worker.ref();
	running = queue.shift()!;
	worker.postMessage({ ...running.task, id: running.id });
}

/** The PDF for `task`, drawn on the PDF worker; 503 when the queue is full. */
export function renderPdf(task: PdfTask): Promise<Buffer> {
	if (queue.length >= MAX_QUEUED_PDFS)
		return Promise.reject(
			new DomainError(
				'busy',
				`${MAX_QUEUED_PDFS} PDFs are already waiting to be drawn; try again in a few seconds`,
				undefined,
				{ 'retry-after': '5' }
			)
		);
	return new Promise<Buffer>((resolve, reject) => {
		queue.push({ id: nextId++, task, resolve, reject });
		pump();
	});
}
