// Outgoing e-mail through nodemailer over SMTP; in development and tests the SMTP server is
// the local mail catcher (scripts/mail-catcher.ts), in a shop it is their mail service.
// Also the account notices the server sends (repeated failed sign-ins), as text and HTML.
import nodemailer from 'nodemailer';
import { env } from './env';

export interface OutgoingMail {
	to: string;
	subject: string;
	text: string;
	html?: string;
	attachments?: { filename: string; content: Buffer | Uint8Array; contentType?: string }[];
}

export interface Mailer {
	sendMail(mail: OutgoingMail): Promise<{ messageId: string }>;
}

/** A mailer for one SMTP server (plain SMTP; no TLS to a loopback catcher). */
export function createMailer(options: { host: string; port: number; from?: string }): Mailer {
	const loopback = options.host === '127.0.0.1' || options.host === 'localhost' || options.host === '::1';
	const transport = nodemailer.createTransport({
		host: options.host,
		port: options.port,
		secure: false,
		ignoreTLS: loopback
	});
	const from = options.from ?? env.MAIL_FROM;
	return {
		async sendMail(mail) {
			const info = await transport.sendMail({
				from,
				...mail,
				attachments: mail.attachments?.map((a) => ({ ...a, content: Buffer.from(a.content) }))
			});
			return { messageId: info.messageId };
		}
	};
}

let defaultMailer: Mailer | null = null;

/** Send through the shop's SMTP server (SMTP_HOST / SMTP_PORT). */
export function sendMail(mail: OutgoingMail): Promise<{ messageId: string }> {
	defaultMailer ??= createMailer({ host: env.SMTP_HOST, port: env.SMTP_PORT });
	return defaultMailer.sendMail(mail);
}

const HTML_ESCAPES: Record<string, string> = {
	'&': '&amp;',
	'<': '&lt;',
	'>': '&gt;',
	'"': '&quot;',
	"'": '&#39;'
};
export const escapeHtml = (s: string) => s.replace(/[&<>"']/g, (c) => HTML_ESCAPES[c]);

// ── account notices ─────────────────────────────────────────────────────────

export interface SignInAlert {
	to: string;
	name: string;
	shopName: string;
	/** Failed sign-ins counted in the window. */
	failures: number;
	windowMinutes: number;
	/** Where the attempts came from (a few, as the server saw them). */
	addresses: string[];
}

/**
 * The notice to an account's owner after repeated failed sign-ins. It says the account is not
 * locked (guessing is slowed per address instead), and what to do if it was not them.
 */
export function signInAlertMail(a: SignInAlert): OutgoingMail {
	const where = a.addresses.length ? a.addresses.join(', ') : 'an unknown address';
	const subject = `${a.shopName}: ${a.failures} failed sign-ins to your Benchlight account`;
	const lines = [
		`Hello ${a.name},`,
		'',
		`In the last ${a.windowMinutes} minutes there were ${a.failures} failed attempts to sign in to your ` +
			`Benchlight account (${a.to}) at ${a.shopName}, from: ${where}.`,
		'',
		'Your account is not locked: you can sign in as usual. Each further wrong password from the ' +
			'same place makes that place wait longer before it may try again.',
		'',
		'If that was you, there is nothing to do. If it was not, change your password on your Account ' +
			"page and tell your shop's admin.",
		'',
		'We send this notice at most once an hour.'
	];
	const e = escapeHtml;
	const html = [
		`<p>Hello ${e(a.name)},</p>`,
		`<p>In the last ${a.windowMinutes} minutes there were <strong>${a.failures} failed attempts</strong> ` +
			`to sign in to your Benchlight account (${e(a.to)}) at ${e(a.shopName)}, from: ${e(where)}.</p>`,
		'<p>Your account is not locked: you can sign in as usual. Each further wrong password from the ' +
			'same place makes that place wait longer before it may try again.</p>',
		'<p>If that was you, there is nothing to do. If it was not, change your password on your ' +
			'Account page and tell your shop&#39;s admin.</p>',
		'<p>We send this notice at most once an hour.</p>'
	].join('\n');
	return { to: a.to, subject, text: lines.join('\n'), html };
}
