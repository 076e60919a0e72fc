// A real SMTP server (smtp-server) on a free loopback port for unit tests: it keeps every
// message it receives, parsed by mailparser, so a test can read back what the app sent.
import { SMTPServer } from 'smtp-server';
import { simpleParser, type ParsedMail } from 'mailparser';
import type { AddressInfo } from 'node:net';

export interface SmtpCatcher {
	port: number;
	messages: ParsedMail[];
	/** The first message that matches, waiting up to `timeoutMs` for it to arrive. */
	waitFor(match: (m: ParsedMail) => boolean, timeoutMs?: number): Promise<ParsedMail>;
	close(): Promise<void>;
}

/** Listens on `port` (0, the default: a free one the system picks; e2e specs pass the app's SMTP_PORT). */
export async function startSmtpCatcher(port = 0): Promise<SmtpCatcher> {
	const messages: ParsedMail[] = [];
	const server = new SMTPServer({
		disabledCommands: ['STARTTLS', 'AUTH'],
		authOptional: true,
		logger: false,
		onData(stream, _session, callback) {
			simpleParser(stream)
				.then((parsed) => {
					messages.push(parsed);
					callback();
				})
				.catch((e: Error) => callback(e));
		}
	});
	await new Promise<void>((ok, fail) => {
		server.once('error', fail);
		server.listen(port, '127.0.0.1', () => ok());
	});
	const bound = (server.server.address() as AddressInfo).port;

	async function waitFor(match: (m: ParsedMail) => boolean, timeoutMs = 5000): Promise<ParsedMail> {
		// performance.now(), not Date: tests that fake the clock still time out.
		const until = performance.now() + timeoutMs;
		for (;;) {
			const found = messages.find(match);
			if (found) return found;
			if (performance.now() > until) throw new Error(`no matching mail within ${timeoutMs} ms`);
			await new Promise((r) => setTimeout(r, 20));
		}
	}

	return {
		port: bound,
		messages,
		waitFor,
		close: () => new Promise<void>((ok) => server.close(() => ok()))
	};
}
