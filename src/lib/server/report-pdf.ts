// PDFs the shop hands out (the customer report now, an invoice later), drawn with pdfkit: Barlow
// embedded from @fontsource/barlow's own files, figures as real text, charts as vector paths
// from stored data (no headless browser). Small generic helpers first, then the report itself.
import PDFDocument from 'pdfkit';
import { readFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import type { ReportModel } from './report';

/** Barlow regular and bold, as the font files' bytes. */
export interface PdfFonts {
	regular: Uint8Array;
	bold: Uint8Array;
}
let fonts: PdfFonts | null = null;

/** The Barlow files from @fontsource/barlow, read once (a PDF worker is handed them instead). */
export function pdfFonts(): PdfFonts {
	if (!fonts) {
		const require = createRequire(import.meta.url);
		const file = (weight: 400 | 700) =>
			readFileSync(require.resolve(`@fontsource/barlow/files/barlow-latin-${weight}-normal.woff`));
		fonts = { regular: file(400), bold: file(700) };
	}
	return fonts;
}

/** Use these font bytes (a worker thread, which cannot resolve package files itself). */
export function usePdfFonts(given: PdfFonts): void {
	fonts = given;
}

/** Characters the embedded Latin subset lacks, written out so the PDF never shows a blank. */
export function pdfText(s: string): string {
	return s
		.replace(/Ω/g, ' ohm')
		.replace(/≤/g, '<=')
		.replace(/≥/g, '>=')
		.replace(/−/g, '-')
		.replace(/ {2,}/g, ' ');
}

export interface PdfMeta {
	title: string;
	author: string;
	subject?: string;
	createdAt: Date;
}

/** An A4 document with Barlow registered as `body` and `bold`, collected into one Buffer. */
export function openDocument(meta: PdfMeta): { doc: PDFKit.PDFDocument; done: Promise<Buffer> } {
	const { regular, bold } = pdfFonts();
	const doc = new PDFDocument({
		// No built-in standard font: it would be read from pdfkit's own folder, which a bundled
		// worker does not have. Barlow is registered and chosen straight away.
		font: null as unknown as string,
		size: 'A4',
		margins: { top: 56, bottom: 56, left: 56, right: 56 },
		info: { Title: meta.title, Author: meta.author, Subject: meta.subject, CreationDate: meta.createdAt },
		bufferPages: true
	});
	doc.registerFont('body', Buffer.from(regular));
	doc.registerFont('bold', Buffer.from(bold));
	doc.font('body').fontSize(10).fillColor('#000');
	const chunks: Buffer[] = [];
	const done = new Promise<Buffer>((resolve, reject) => {
		doc.on('data', (c: Buffer) => chunks.push(c));
		doc.on('end', () => resolve(Buffer.concat(chunks)));
		doc.on('error', reject);
	});
	return { doc, done };
}

/** A shop document's top: the shop's name, its contact line, and the document's title. */
export function documentHeader(
	doc: PDFKit.PDFDocument,
	shop: { name: string; address: string; phone: string; email: string },
	title: string
): void {
	doc.font('bold').fontSize(18).text(pdfText(shop.name));
	const contact = [shop.address, shop.phone, shop.email].filter(Boolean).join(' · ');
	if (contact) paragraph(doc, contact, { muted: true });
	doc.moveDown(0.5).font('bold').fontSize(13).text(pdfText(title)).font('body').fontSize(10);
}

export function heading(doc: PDFKit.PDFDocument, text: string, size = 14): void {
	if (doc.y > doc.page.height - doc.page.margins.bottom - 80) doc.addPage();
	doc.moveDown(0.8).font('bold').fontSize(size).text(pdfText(text)).font('body').fontSize(10).moveDown(0.3);
}

export function paragraph(doc: PDFKit.PDFDocument, text: string, opts: { muted?: boolean } = {}): void {
	doc
		.fillColor(opts.muted ? '#444' : '#000')
		.text(pdfText(text))
		.fillColor('#000');
}

/** A simple table: column widths as fractions of the text width; a header row in bold. */
export function table(doc: PDFKit.PDFDocument, header: string[], rows: string[][], widths: number[]): void {
	const x0 = doc.page.margins.left;
	const w = doc.page.width - doc.page.margins.left - doc.page.margins.right;
	const cols = widths.map((f) => f * w);
	const drawRow = (cells: string[], bold: boolean) => {
		const heights = cells.map((c, i) =>
			doc.font(bold ? 'bold' : 'body').heightOfString(pdfText(c), { width: cols[i] - 6 })
		);
		const h = Math.max(...heights, 12) + 4;
		if (doc.y + h > doc.page.height - doc.page.margins.bottom) doc.addPage();
		const y = doc.y;
		let x = x0;
		cells.forEach((c, i) => {
			doc.font(bold ? 'bold' : 'body').text(pdfText(c), x + 3, y + 2, { width: cols[i] - 6 });
			x += cols[i];
		});
		doc
			.moveTo(x0, y + h)
			.lineTo(x0 + w, y + h)
			.lineWidth(0.3)
			.strokeColor('#999')
			.stroke();
		doc.x = x0;
		doc.y = y + h;
	};
	drawRow(header, true);
	for (const r of rows) drawRow(r, false);
	doc.font('body').moveDown(0.5);
}

export interface PdfTrace {
	label: string;
	x: number[];
	y: (number | null)[];
	/** Dash pattern: traces are told apart by line style, not by colour alone. */
	dash?: [number, number];
	gray?: string;
}

/** A line chart drawn as vector paths, with a log or linear x axis, grid, labels and a legend. */
export function lineChart(
	doc: PDFKit.PDFDocument,
	traces: PdfTrace[],
	opts: { xLog?: boolean; xLabel: string; yLabel: string; height?: number; xTicks: number[]; yTicks?: number }
): void {
	const height = opts.height ?? 170;
	if (doc.y + height + 40 > doc.page.height - doc.page.margins.bottom) doc.addPage();
	const left = doc.page.margins.left + 36;
	const width = doc.page.width - doc.page.margins.right - left;
	const top = doc.y + 4;
	const fx = (v: number) => (opts.xLog ? Math.log10(v) : v);
	const xs = traces.flatMap((t) => t.x).filter((v) => v > 0 || !opts.xLog);
	const ys = traces.flatMap((t) => t.y).filter((v): v is number => v !== null && Number.isFinite(v));
	if (!xs.length || !ys.length) return;
	const x0 = fx(Math.min(...opts.xTicks, ...xs));
	const x1 = fx(Math.max(...opts.xTicks, ...xs));
	let y0 = Math.min(...ys);
	let y1 = Math.max(...ys);
	if (y1 - y0 < 1e-9) {
		y0 -= 1;
		y1 += 1;
	}
	const pad = (y1 - y0) * 0.08;
	y0 -= pad;
	y1 += pad;
	const px = (v: number) => left + ((fx(v) - x0) / (x1 - x0)) * width;
	const py = (v: number) => top + height - ((v - y0) / (y1 - y0)) * height;
	doc.save();
	doc.rect(left, top, width, height).lineWidth(0.5).strokeColor('#000').stroke();
	doc.fontSize(7).fillColor('#333');
	for (const t of opts.xTicks) {
		const x = px(t);
		doc
			.moveTo(x, top)
			.lineTo(x, top + height)
			.lineWidth(0.2)
			.strokeColor('#bbb')
			.stroke();
		doc.text(t >= 1000 ? `${t / 1000}k` : String(t), x - 12, top + height + 2, {
			width: 24,
			align: 'center'
		});
	}
	const n = opts.yTicks ?? 5;
	for (let i = 0; i <= n; i++) {
		const v = y0 + ((y1 - y0) * i) / n;
		const y = py(v);
		doc
			.moveTo(left, y)
			.lineTo(left + width, y)
			.lineWidth(0.2)
			.strokeColor('#bbb')
			.stroke();
		doc.text(v.toFixed(Math.abs(y1 - y0) < 10 ? 1 : 0), left - 34, y - 4, { width: 30, align: 'right' });
	}
	for (const t of traces) {
		let pen = false;
		t.x.forEach((xv, i) => {
			const yv = t.y[i];
			if (yv === null || !Number.isFinite(yv) || (opts.xLog && xv <= 0)) {
				pen = false;
				return;
			}
			if (pen) doc.lineTo(px(xv), py(yv));
			else doc.moveTo(px(xv), py(yv));
			pen = true;
		});
		doc.lineWidth(1).strokeColor(t.gray ?? '#000');
		if (t.dash) doc.dash(t.dash[0], { space: t.dash[1] });
		doc.stroke();
		doc.undash();
	}
	doc.fontSize(8).fillColor('#000');
	doc.text(pdfText(opts.xLabel), left, top + height + 12, { width, align: 'center' });
	doc.text(pdfText(opts.yLabel), doc.page.margins.left, top - 12);
	// Legend: a short sample of each line style and its label.
	let lx = left;
	const ly = top + height + 26;
	for (const t of traces) {
		doc
			.moveTo(lx, ly + 4)
			.lineTo(lx + 18, ly + 4)
			.lineWidth(1)
			.strokeColor(t.gray ?? '#000');
		if (t.dash) doc.dash(t.dash[0], { space: t.dash[1] });
		doc.stroke();
		doc.undash();
		doc.text(pdfText(t.label), lx + 22, ly, { lineBreak: false });
		lx += 30 + doc.widthOfString(pdfText(t.label));
	}
	doc.restore();
	doc.x = doc.page.margins.left;
	doc.y = ly + 18;
	doc.fontSize(10);
}

const date = (iso: string) => iso.slice(0, 10);

/** The customer report as a PDF (A4). */
export async function renderReportPdf(m: ReportModel): Promise<Buffer> {
	const { doc, done } = openDocument({
		title: `Service report — ${m.job.make} ${m.job.model} (job ${m.job.id})`,
		author: m.shop.name,
		subject: 'Measured service report',
		createdAt: new Date(m.generatedAt)
	});
	documentHeader(doc, m.shop, `Service report for ${m.customerName}`);
	paragraph(
		doc,
		`${m.job.category}: ${m.job.make} ${m.job.model}${m.job.serial ? `, serial ${m.job.serial}` : ''}${m.job.year ? `, ${m.job.year}` : ''} · job ${m.job.id} · ${date(m.generatedAt)}`
	);
	heading(doc, 'What you told us');
	paragraph(doc, `“${m.job.complaint}”`);
	if (m.work.length) {
		heading(doc, 'What we did');
		for (const w of m.work) paragraph(doc, `${date(w.date)} — ${w.text}`);
	}
	if (m.parts.length) {
		heading(doc, 'Parts fitted');
		table(
			doc,
			['Position', 'Part', 'Value', 'Qty'],
			m.parts.map((p) => [p.refDes, p.description, p.value ?? '', String(p.quantity)]),
			[0.18, 0.44, 0.28, 0.1]
		);
	}
	heading(doc, 'Measured before and after');
	if (m.before || m.after) {
		paragraph(
			doc,
			[m.before?.caption ?? 'No before measurement.', m.after?.caption ?? 'No after measurement.'].join(' '),
			{ muted: true }
		);
		table(
			doc,
			['Figure', 'Before', 'After', 'What it means'],
			m.figures.map((f) => [
				`${f.label}${f.channel ? ` (${f.channel})` : ''}`,
				f.before ?? '—',
				f.after ?? '—',
				f.plain
			]),
			[0.22, 0.15, 0.15, 0.48]
		);
		if (m.spectra.length)
			lineChart(
				doc,
				m.spectra.map((s, i) => ({
					label: s.label,
					x: s.frequencyHz,
					y: s.levelDbv,
					dash: i === 0 ? [3, 2] : undefined,
					gray: i === 0 ? '#777' : '#000'
				})),
				{ xLog: true, xLabel: 'Frequency (Hz)', yLabel: 'Level (dBV)', xTicks: [20, 100, 1000, 10000, 20000] }
			);
	} else paragraph(doc, 'No measurements are recorded yet.');
	if (m.procedures.length) {
		heading(doc, 'Bench procedures');
		table(
			doc,
			['Procedure', 'Run', 'Result', 'Verdict'],
			m.procedures.map((p) => [p.kind, p.label, p.summary, p.verdict === 'none' ? 'recorded' : p.verdict]),
			[0.22, 0.26, 0.38, 0.14]
		);
	}
	if (m.soak) {
		heading(doc, 'Heat soak');
		paragraph(
			doc,
			`${m.soak.status}: ${m.soak.minutes} minutes at ${m.soak.drivePowerW.toFixed(1)} W into ${m.soak.loadOhms} Ω. Highest temperatures: ${m.soak.maxC.map((p) => `${p.probe} ${p.celsius.toFixed(1)} °C`).join(', ')}.`
		);
		lineChart(
			doc,
			m.soak.series.traces.map((t, i) => ({
				label: t.label,
				x: m.soak!.series.minutes,
				y: t.meanC,
				dash: i === 0 ? undefined : i === 1 ? [4, 2] : [1, 2],
				gray: '#000'
			})),
			{ xLabel: 'Minutes', yLabel: 'Temperature (°C)', xTicks: [0, m.soak.minutes], height: 140 }
		);
	}
	if (m.worksheets.length) {
		heading(doc, 'Bench worksheets');
		table(
			doc,
			['Worksheet', 'On record'],
			m.worksheets.map((w) => [w.label, w.detail]),
			[0.3, 0.7]
		);
	}
	if (m.safetyCheck) {
		heading(doc, 'Electrical safety check');
		paragraph(doc, `${m.safetyCheck}. This record does not replace any testing that local rules require.`);
	}
	heading(doc, 'Sign-off');
	paragraph(
		doc,
		m.signOff ? `${m.signOff.name}, ${date(m.signOff.at)}: ${m.signOff.meaning}.` : 'Not yet signed off.'
	);
	if (m.shop.safetyNote) {
		heading(doc, 'For your safety', 12);
		paragraph(doc, m.shop.safetyNote);
	}
	if (m.shop.warrantyNote) {
		heading(doc, 'Warranty', 12);
		paragraph(doc, m.shop.warrantyNote);
	}
	if (m.shop.footer) {
		doc.moveDown();
		paragraph(doc, m.shop.footer, { muted: true });
	}
	doc.end();
	return done;
}
