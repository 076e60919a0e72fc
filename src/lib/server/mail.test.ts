// Mail goes out through nodemailer over real SMTP: to a real smtp-server on a free loopback port
// (read back with mailparser), and to the local catcher script, which keeps it on disk.
import { spawn, type ChildProcess } from 'node:child_process';
import { mkdtempSync, readdirSync, readFileSync, rmSync } from 'node:fs';
import { createServer, type AddressInfo } from 'node:net';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { startSmtpCatcher, type SmtpCatcher } from '../../../tests/unit/smtp-catcher';
import { createMailer, escapeHtml, signInAlertMail } from './mail';

async function freePort(): Promise<number> {
	const server = createServer();
	await new Promise<void>((ok) => server.listen(0, '127.0.0.1', () => ok()));
	const { port } = server.address() as AddressInfo;
	await new Promise<void>((ok) => server.close(() => ok()));
	return port;
}

let smtp: SmtpCatcher;
beforeAll(async () => {
	smtp = await startSmtpCatcher();
});
afterAll(async () => {
	await smtp?.close();
});

describe('sendMail over SMTP', () => {
	it('delivers subject, sender, recipient, text and HTML intact', async () => {
		const mailer = createMailer({ host: '127.0.0.1', port: smtp.port, from: 'Bench <bench@example.com>' });
		await mailer.sendMail({
			to: 'owner@example.com',
			subject: 'Your unit is ready',
			text: 'Measured report attached.',
			html: '<p>Measured report <b>attached</b>.</p>'
		});
		const got = await smtp.waitFor((m) => m.subject === 'Your unit is ready');
		expect(got.from?.value[0].address).toBe('bench@example.com');
		expect(got.to && !Array.isArray(got.to) ? got.to.value[0].address : null).toBe('owner@example.com');
		expect(got.text?.trim()).toBe('Measured report attached.');
		expect(got.html).toContain('<b>attached</b>');
	});
});

describe('the failed sign-in notice', () => {
	const alert = {
		to: 'pat@example.com',
		name: 'Pat <Benchley>',
		shopName: 'Harrow & Vane Audio',
		failures: 10,
		windowMinutes: 60,
		addresses: ['203.0.113.7', '2001:db8:1:2::/64']
	};

	it('says how many, from where, that the account is not locked, and what to do', () => {
		const mail = signInAlertMail(alert);
		expect(mail.to).toBe('pat@example.com');
		expect(mail.subject).toBe('Harrow & Vane Audio: 10 failed sign-ins to your Benchlight account');
		expect(mail.text).toContain('10 failed attempts');
		expect(mail.text).toContain('from: 203.0.113.7, 2001:db8:1:2::/64');
		expect(mail.text).toContain('not locked');
		expect(mail.text).toContain('change your password');
		// Names and the shop name are escaped in the HTML part, never markup.
		expect(mail.html).toContain('Pat &lt;Benchley&gt;');
		expect(mail.html).toContain('Harrow &amp; Vane Audio');
		expect(mail.html).not.toContain('<Benchley>');
	});

	it('arrives as text and HTML through a real SMTP server', async () => {
		const mailer = createMailer({ host: '127.0.0.1', port: smtp.port });
		await mailer.sendMail(signInAlertMail(alert));
		const got = await smtp.waitFor((m) => (m.subject ?? '').includes('failed sign-ins'));
		expect(got.text).toContain('10 failed attempts to sign in');
		expect(got.html).toContain('<strong>10 failed attempts</strong>');
		expect(got.html).toContain('Pat &lt;Benchley&gt;');
	});

	it('escapes the five HTML-special characters', () => {
		expect(escapeHtml(`<a href="x">'&'</a>`)).toBe('&lt;a href=&quot;x&quot;&gt;&#39;&amp;&#39;&lt;/a&gt;');
	});
});

describe('the local mail catcher', () => {
	let catcher: ChildProcess;
	let dir: string;
	let smtpPort: number;

	beforeAll(async () => {
		dir = mkdtempSync(join(tmpdir(), 'benchlight-mail-'));
		smtpPort = await freePort();
		const uiPort = await freePort();
		catcher = spawn(process.execPath, ['--import', 'tsx', 'scripts/mail-catcher.ts'], {
			env: { ...process.env, SMTP_PORT: String(smtpPort), MAIL_UI_PORT: String(uiPort), MAIL_DIR: dir },
			stdio: ['ignore', 'pipe', 'inherit']
		});
		await new Promise<void>((ok) => catcher.stdout!.on('data', (d) => String(d).includes('SMTP on') && ok()));
	});

	afterAll(() => {
		catcher?.kill('SIGTERM');
		rmSync(dir, { recursive: true, force: true });
	});

	it('keeps what it caught on disk with subject, recipient and body intact', async () => {
		await createMailer({ host: '127.0.0.1', port: smtpPort }).sendMail({
			to: 'owner@example.com',
			subject: 'Your unit is ready',
			text: 'Measured report attached.'
		});
		let files: string[] = [];
		for (let i = 0; i < 50 && files.length === 0; i++) {
			await new Promise((r) => setTimeout(r, 100));
			files = readdirSync(dir).filter((f) => f.endsWith('.json'));
		}
		expect(files).toHaveLength(1);
		const stored = JSON.parse(readFileSync(join(dir, files[0]), 'utf8'));
		expect(stored.to).toBe('owner@example.com');
		expect(stored.subject).toBe('Your unit is ready');
		expect(stored.text.trim()).toBe('Measured report attached.');
	});
});
