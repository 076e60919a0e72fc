// Outgoing e-mail through nodemailer over SMTP; in development and tests the SMTP server is
// the local mail catcher (scripts/mail-catcher.ts), in a shop it is their mail service.
import nodemailer, { type Transporter } from 'nodemailer';
import { env } from './env';

let transport: Transporter | null = null;

function getTransport(): Transporter {
	transport ??= nodemailer.createTransport({
		host: env.SMTP_HOST,
		port: env.SMTP_PORT,
		secure: false,
		ignoreTLS: env.SMTP_HOST === '127.0.0.1' || env.SMTP_HOST === 'localhost'
	});
	return transport;
}

export interface OutgoingMail {
	to: string;
	subject: string;
	text: string;
	html?: string;
	attachments?: { filename: string; content: Buffer | Uint8Array; contentType?: string }[];
}

export async function sendMail(mail: OutgoingMail): Promise<{ messageId: string }> {
	const info = await getTransport().sendMail({
		from: env.MAIL_FROM,
		...mail,
		attachments: mail.attachments?.map((a) => ({ ...a, content: Buffer.from(a.content) }))
	});
	return { messageId: info.messageId };
}
