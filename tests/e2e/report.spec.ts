// The customer report end to end: a supervisor opens the demo job's report, sends it through
// SMTP (a real SMTP server on the app's SMTP_PORT reads it back, PDF attached), the customer
// opens the private link signed out, and a revoked link answers a bare 404. Printing hides the
// app around the report.
import { expect, test, type Page } from '@playwright/test';
import { execFileSync } from 'node:child_process';
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { ready, signIn } from './helpers';
import { startSmtpCatcher, type SmtpCatcher } from '../unit/smtp-catcher';
import { axeViolations } from './axe';

const DEMO = { make: 'Pellowmere', model: 'SA-150' };
const SMTP_PORT = Number(process.env.E2E_PORTS!.split(',')[2]);
let catcher: SmtpCatcher;

test.beforeAll(async () => {
	catcher = await startSmtpCatcher(SMTP_PORT);
});
test.afterAll(async () => {
	await catcher.close();
});

async function demoJobId(page: Page): Promise<number> {
	const res = await page.request.get(`/api/jobs?q=${DEMO.model}`);
	const list = (await res.json()) as { items: { id: number; make: string }[] };
	return list.items.find((j) => j.make === DEMO.make)!.id;
}

test('a supervisor sends the report; the customer reads it signed out until the link is revoked', async ({
	page,
	browser,
	baseURL
}) => {
	test.setTimeout(120_000);
	const origin = { origin: baseURL! };
	// The demo job awaits sign-off: the admin lets the shop send drafts for this test, and puts it back.
	await signIn(page, 'admin@example.com');
	const before = (await (await page.request.get('/api/settings')).json()) as {
		customerReport: Record<string, unknown>;
	};
	const patch = (customerReport: Record<string, unknown>) =>
		page.request.patch('/api/settings', { headers: origin, data: { customerReport } });
	expect((await patch({ ...before.customerReport, allowDraftSend: true })).status()).toBe(200);
	try {
		await page.context().clearCookies();
		await signIn(page, 'supervisor@example.com');
		const jobId = await demoJobId(page);
		await page.goto(`/jobs/${jobId}`);
		await ready(page);
		await page.getByTestId('link-report').click();
		await expect(page).toHaveURL(new RegExp(`/jobs/${jobId}/report$`));
		await ready(page);
		const report = page.getByTestId('report');
		await expect(report).toContainText('Service report for Agathe Lindqvist-Oyelaran');
		await expect(report.getByTestId('report-figures').locator('[data-row="ch1:thdnPercent"]')).toBeVisible();
		await expect(page.getByTestId('report-signoff')).toHaveText('Not yet signed off.');
		// The demo unit's worksheets are on record (intake, power-up, bias, safety check).
		await expect(page.getByTestId('report-worksheets')).toContainText('Safety check before return');
		// Internal notes stay internal: only entries marked for the customer are on the report.
		await expect(report).not.toContainText('Reset bias to 22 mA per side');

		// Printing shows the report alone: no navigation, no send form.
		await page.emulateMedia({ media: 'print' });
		await expect(page.locator('header.sticky')).toBeHidden();
		await expect(page.getByTestId('report-send')).toBeHidden();
		await expect(report).toBeVisible();
		await page.emulateMedia({ media: 'screen' });

		await page.getByTestId('report-send-button').click();
		await expect(page.getByTestId('report-send-message')).toContainText('Sent to agathe.lo@example.net');
		const mail = await catcher.waitFor((m) => (m.subject ?? '').includes(`job ${jobId}`), 15_000);
		expect(mail.text).toContain('This is a draft');
		expect(mail.html).toContain('/r/');
		const pdf = mail.attachments.find((a) => a.contentType === 'application/pdf');
		expect(pdf).toBeTruthy();
		// The attachment is a real PDF with the report's text (read back by poppler's pdftotext).
		const dir = mkdtempSync(join(tmpdir(), 'mail-pdf-'));
		writeFileSync(join(dir, 'r.pdf'), pdf!.content);
		expect(execFileSync('pdftotext', [join(dir, 'r.pdf'), '-'], { encoding: 'utf8' })).toContain(
			'Service report for Agathe Lindqvist-Oyelaran'
		);
		const url = /https?:\/\/\S+\/r\/[A-Za-z0-9_-]{43}/.exec(mail.text ?? '')![0];

		// The customer: no account, no cookies, a phone-sized screen (axe needs the CSP bypassed).
		const customer = await browser.newContext({ viewport: { width: 390, height: 844 }, bypassCSP: true });
		const cpage = await customer.newPage();
		const res = await cpage.goto(url);
		expect(res!.status()).toBe(200);
		expect(res!.headers()['cache-control']).toContain('no-store');
		expect(res!.headers()['referrer-policy']).toBe('no-referrer');
		expect(res!.headers()['x-robots-tag']).toContain('noindex');
		await expect(cpage.getByTestId('report')).toContainText('Pellowmere SA-150');
		// Fits the phone without sideways scrolling, and meets WCAG 2.2 AA as axe checks it.
		expect(await cpage.evaluate(() => document.documentElement.scrollWidth)).toBeLessThanOrEqual(390);
		expect(await axeViolations(cpage)).toEqual([]);
		const pdfRes = await cpage.request.get(`${url}/report.pdf`);
		expect(pdfRes.headers()['content-type']).toBe('application/pdf');

		// The shop sees the link was opened, then revokes it: the customer gets a bare 404.
		await page.reload();
		await ready(page);
		await expect(page.getByTestId('report-links')).toContainText('opened 1×');
		await page.getByTestId('report-revoke').first().click();
		await expect(page.getByTestId('report-send-message')).toContainText('Link revoked');
		expect((await cpage.goto(url))!.status()).toBe(404);
		expect((await cpage.request.get(`${url}/report.pdf`)).status()).toBe(404);
		await customer.close();
	} finally {
		await page.context().clearCookies();
		await signIn(page, 'admin@example.com');
		expect((await patch(before.customerReport)).status()).toBe(200);
	}
});
