// Mail goes out through nodemailer over real SMTP to the local catcher, which keeps it on disk.
import { spawn, type ChildProcess } from 'node:child_process';
import { mkdtempSync, readdirSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';

const SMTP_PORT = 2700 + Math.floor(Math.random() * 200);
const UI_PORT = SMTP_PORT + 300;
let catcher: ChildProcess;
let dir: string;

beforeAll(async () => {
	dir = mkdtempSync(join(tmpdir(), 'benchlight-mail-'));
	catcher = spawn(process.execPath, ['--import', 'tsx', 'scripts/mail-catcher.ts'], {
		env: { ...process.env, SMTP_PORT: String(SMTP_PORT), MAIL_UI_PORT: String(UI_PORT), MAIL_DIR: dir },
		stdio: ['ignore', 'pipe', 'inherit']
	});
	await new Promise<void>((ok) => catcher.stdout!.on('data', (d) => String(d).includes('SMTP on') && ok()));
	process.env.SMTP_PORT = String(SMTP_PORT);
});

afterAll(() => {
	catcher?.kill('SIGTERM');
	rmSync(dir, { recursive: true, force: true });
});

describe('sendMail', () => {
	it('delivers to the SMTP catcher with subject, recipient and body intact', async () => {
		const { sendMail } = await import('./mail');
		await sendMail({
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
