// The money story end to end in Chromium against the local test payment service: a supervisor
// revises and sends the demo receiver's estimate (mail read back from a real SMTP server on the
// app's SMTP_PORT), the customer opens the link signed out, approves it, declines the first
// checkout (nothing paid) and pays the deposit on the second; only the payment service's signed
// webhook marks it paid; a forged webhook is refused; the job shows the balance.
import { expect, test, type Page } from '@playwright/test';
import { ready, signIn } from './helpers';
import { startSmtpCatcher, type SmtpCatcher } from '../unit/smtp-catcher';
import { axeViolations } from './axe';

const DEMO = { make: 'Ashgrove', model: 'AR-330' };
const SMTP_PORT = Number(process.env.E2E_PORTS!.split(',')[2]);
const PAYMENTS_PORT = Number(process.env.E2E_PORTS!.split(',')[4]);
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

const euros = (s: string) => Number(s.replace(/[^\d.]/g, ''));

test('estimate → customer approval → declined checkout → paid deposit → balance on the job', async ({
	page,
	browser,
	baseURL
}) => {
	test.setTimeout(150_000);
	await signIn(page, 'supervisor@example.com');
	const jobId = await demoJobId(page);
	await page.goto(`/jobs/${jobId}`);
	await ready(page);
	await page.getByTestId('link-estimate').click();
	await expect(page).toHaveURL(new RegExp(`/jobs/${jobId}/estimate$`));
	await ready(page);
	// The seed sent version 1; the supervisor revises it with an extra hour and sends version 2.
	await expect(page.getByTestId('estimate-versions').locator('li')).toHaveCount(1);
	await page.getByTestId('add-labour').click();
	await page.getByTestId('line-description').last().fill('Clean and lubricate the tuning gang');
	await page.getByTestId('line-hours').last().fill('1');
	await page.getByTestId('estimate-save').click();
	await expect(page.getByTestId('save-message')).toHaveText('Draft version 2 saved');
	const previewTotal = await page.getByTestId('estimate-preview-total').textContent();
	await page.getByTestId('estimate-send').click();
	await expect(page.getByTestId('send-message')).toHaveText('Version 2 sent to oswin.f@example.org');
	await expect(page.getByTestId('estimate-versions').locator('li[data-status="superseded"]')).toHaveCount(1);

	const mail = await catcher.waitFor((m) => (m.subject ?? '').includes(`job ${jobId}, version 2`), 15_000);
	const link = /http:\/\/[^\s]+\/e\/[A-Za-z0-9_-]{43}/.exec(mail.text ?? '')![0];
	expect(new URL(link).origin).toBe(baseURL);

	// The customer, signed out, on a phone-sized screen.
	// The page's own CSP stays on here (the checkout hand-off must work under it).
	const customer = await browser.newContext({ viewport: { width: 390, height: 844 } });
	const c = await customer.newPage();
	await c.goto(link);
	await ready(c);
	await expect(c.getByRole('heading', { level: 1 })).toHaveText(
		`Estimate for your ${DEMO.make} ${DEMO.model}`
	);
	await expect(c.getByTestId('estimate-document-total')).toHaveText(previewTotal!);
	expect(await c.evaluate(() => document.documentElement.scrollWidth)).toBeLessThanOrEqual(390);
	// Accessibility in a second context: bypassCSP only so the axe script may be injected.
	const audit = await browser.newContext({ viewport: { width: 390, height: 844 }, bypassCSP: true });
	const a = await audit.newPage();
	await a.goto(link);
	await ready(a);
	expect(await axeViolations(a)).toEqual([]);
	await audit.close();

	// Approving needs the tick: the refusal says so, nothing is recorded.
	await c.getByTestId('typed-name').fill('Oswin Farrowdale');
	await c.getByTestId('decide-submit').click();
	await expect(c.getByTestId('decide-message')).toContainText('Tick the box');
	await c.getByTestId('consent').check();
	await c.getByTestId('decide-submit').click();
	await expect(c.getByTestId('estimate-decision')).toContainText('Approved by Oswin Farrowdale');
	const shopMail = await catcher.waitFor((m) => (m.subject ?? '').includes('version 2 approved'), 15_000);
	expect(shopMail.text).toContain('The job is now repairing');

	// First checkout: the payer declines on the payment service's page; nothing is paid.
	const deposit = c.getByTestId('pay-button');
	await expect(deposit).toContainText('Pay the deposit of');
	const depositText = (await deposit.textContent())!;
	await deposit.click();
	await expect(c).toHaveURL(new RegExp(`^http://127\\.0\\.0\\.1:${PAYMENTS_PORT}/pay/cs_test_`));
	await c.getByTestId('fake-decline').click();
	await expect(c).toHaveURL(/\?checkout=cancelled$/);
	await ready(c);
	await expect(c.getByTestId('checkout-cancelled')).toBeVisible();
	await expect(c.getByTestId('customer-received')).toHaveText('€0.00');

	// Second checkout: paid; the webhook (not the redirect) records it before the page returns.
	await c.getByTestId('pay-button').click();
	await expect(c).toHaveURL(new RegExp(`^http://127\\.0\\.0\\.1:${PAYMENTS_PORT}/pay/cs_test_`));
	await expect(c.getByTestId('fake-amount')).toContainText(depositText.replace(/[^\d.]/g, ''));
	await c.getByTestId('fake-pay').click();
	await expect(c).toHaveURL(/\?checkout=done$/);
	await ready(c);
	await expect(c.getByTestId('customer-payments')).toContainText('Online checkout');
	expect(euros((await c.getByTestId('customer-received').textContent())!)).toBe(euros(depositText));
	await expect(c.getByTestId('pay-button')).toHaveCount(0);
	const receipt = await catcher.waitFor((m) => (m.subject ?? '').startsWith('Deposit received'), 15_000);
	expect(receipt.text).toContain('Online checkout');
	await customer.close();

	// A forged event (no valid signature) is refused and changes nothing.
	const forged = await page.request.post('/api/payments/webhook', {
		headers: { 'stripe-signature': 't=1,v1=' + '0'.repeat(64) },
		data: { id: 'evt_forged', type: 'checkout.session.completed', data: { object: { id: 'cs_test_x' } } }
	});
	expect(forged.status()).toBe(400);
	expect(((await forged.json()) as { message: string }).message).toMatch(/signature does not verify/);

	// The shop sees the deposit and the balance left.
	await page.goto(`/jobs/${jobId}/estimate`);
	await ready(page);
	const total = euros((await page.getByTestId('money-total').textContent())!.split('(')[0]);
	const received = euros((await page.getByTestId('money-received').textContent())!);
	expect(received).toBe(euros(depositText));
	expect(euros((await page.getByTestId('money-balance').textContent())!)).toBeCloseTo(total - received, 2);
	await expect(page.getByTestId('payments').locator('li')).toHaveCount(1);
	await page.goto(`/jobs/${jobId}`);
	await ready(page);
	await expect(page.getByTestId('current-status').or(page.locator('body'))).toContainText('Repairing');
});
