// Local stand-in for the shop's mail service: accepts SMTP on loopback, keeps every message
// under data/mail/, and lists them on a small web page. Nothing is delivered anywhere.
import { SMTPServer } from 'smtp-server';
import { simpleParser } from 'mailparser';
import { createServer } from 'node:http';
import { mkdirSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join, resolve } from 'node:path';

const SMTP_PORT = Number(process.env.SMTP_PORT ?? 2525);
const UI_PORT = Number(process.env.MAIL_UI_PORT ?? 8025);
const MAIL_DIR = resolve(process.env.MAIL_DIR ?? 'data/mail');
const MAX_MESSAGE_BYTES = 25 * 1024 * 1024;
// Caught mail holds customers' names and addresses: owner-only, like the database.
mkdirSync(MAIL_DIR, { recursive: true, mode: 0o700 });

interface Stored {
	id: string;
	receivedAt: string;
	from: string;
	to: string;
	subject: string;
	text: string;
}

const smtp = new SMTPServer({
	disabledCommands: ['STARTTLS', 'AUTH'],
	authOptional: true,
	size: MAX_MESSAGE_BYTES,
	banner: 'Benchlight mail catcher',
	onData(stream, _session, callback) {
		const chunks: Buffer[] = [];
		stream.on('data', (c: Buffer) => chunks.push(c));
		stream.on('end', async () => {
			try {
				const raw = Buffer.concat(chunks);
				const parsed = await simpleParser(raw);
				const id = `${Date.now()}-${Math.random().toString(36).slice(2, 8)}`;
				const meta: Stored = {
					id,
					receivedAt: new Date().toISOString(),
					from: parsed.from?.text ?? '',
					to: Array.isArray(parsed.to) ? parsed.to.map((a) => a.text).join(', ') : (parsed.to?.text ?? ''),
					subject: parsed.subject ?? '(no subject)',
					text: parsed.text ?? ''
				};
				writeFileSync(join(MAIL_DIR, `${id}.eml`), raw, { mode: 0o600 });
				writeFileSync(join(MAIL_DIR, `${id}.json`), JSON.stringify(meta, null, 2), { mode: 0o600 });
				console.log(`caught mail to ${meta.to}: ${meta.subject}`);
				callback();
			} catch (err) {
				callback(err as Error);
			}
		});
	}
});
smtp.on('error', (err) => console.error('smtp error:', err.message));
smtp.listen(SMTP_PORT, '127.0.0.1', () => console.log(`SMTP on 127.0.0.1:${SMTP_PORT}`));

function listMessages(): Stored[] {
	return readdirSync(MAIL_DIR)
		.filter((f) => f.endsWith('.json'))
		.map((f) => JSON.parse(readFileSync(join(MAIL_DIR, f), 'utf8')) as Stored)
		.sort((a, b) => b.receivedAt.localeCompare(a.receivedAt));
}

const escapeHtml = (s: string) =>
	s.replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c]!);

const ui = createServer((req, res) => {
	const url = new URL(req.url ?? '/', 'http://127.0.0.1');
	if (url.pathname === '/api/messages') {
		res.setHeader('content-type', 'application/json');
		res.end(JSON.stringify(listMessages()));
		return;
	}
	const rows = listMessages()
		.map(
			(m) =>
				`<tr><td>${escapeHtml(m.receivedAt)}</td><td>${escapeHtml(m.to)}</td><td>${escapeHtml(m.subject)}</td><td><pre>${escapeHtml(m.text.slice(0, 2000))}</pre></td></tr>`
		)
		.join('');
	res.setHeader('content-type', 'text/html; charset=utf-8');
	res.end(
		`<!doctype html><title>Benchlight mail catcher</title><style>body{font:14px system-ui;margin:2rem;background:#111;color:#ddd}td{border-top:1px solid #333;padding:.4rem;vertical-align:top}pre{white-space:pre-wrap;margin:0}</style><h1>Caught mail</h1><p>Messages the app sent in development; nothing leaves this machine.</p><table><tr><th>Received</th><th>To</th><th>Subject</th><th>Text</th></tr>${rows}</table>`
	);
});
ui.listen(UI_PORT, '127.0.0.1', () => console.log(`mail list on http://127.0.0.1:${UI_PORT}`));

function stop() {
	smtp.close(() => undefined);
	ui.close();
	process.exit(0);
}
process.on('SIGTERM', stop);
process.on('SIGINT', stop);
