// Accessibility: axe-core (from npm, injected into the page) checks every page against WCAG 2.0,
// 2.1 and 2.2 levels A and AA, in the dark and the light theme. Pages are found on disk
// (tests/e2e/pages.ts), so a new page is checked without being listed here.
import { expect, test, type Page } from '@playwright/test';
import { pagesToCheck, PUBLIC_PAGES } from './pages';
import { ready, signIn } from './helpers';
import { axeViolations, type AxeViolation } from './axe';

const SCHEMES = ['dark', 'light'] as const;

// The app's Content-Security-Policy (rightly) refuses an injected script; the checker is the
// test's, not the page's, so the browser is told to let it in.
test.use({ bypassCSP: true });

function describe(path: string, scheme: string, violations: AxeViolation[]): string[] {
	return violations.map(
		(v) =>
			`${path} (${scheme}) ${v.id}: ${v.help} — ${v.nodes
				.map(
					(n) =>
						`${n.target.join(' ')}${n.failureSummary ? ` [${n.failureSummary.replace(/\s+/g, ' ').slice(0, 160)}]` : ''}`
				)
				.join(' | ')}`
	);
}

/** The app's own theme switch keeps its choice here (see src/app.html); pages read it before paint. */
async function setTheme(page: Page, scheme: (typeof SCHEMES)[number]) {
	await page.evaluate((t) => localStorage.setItem('benchlight-theme', t), scheme);
}

async function open(page: Page, path: string) {
	const res = await page.goto(path);
	// An error page would pass for the page it stands in for: every page must answer.
	expect(res?.ok(), `${path} answered ${res?.status()}`).toBe(true);
	await ready(page);
	await page.evaluate(() => new Promise((r) => requestAnimationFrame(() => requestAnimationFrame(r))));
}

/** Time per page: load, the bridge link on live pages, and axe itself on a busy page. */
const PER_PAGE_MS = 20_000;

for (const scheme of SCHEMES) {
	test(`every signed-in page passes the WCAG 2.2 AA checks (${scheme} theme)`, async ({ page }) => {
		await signIn(page, 'admin@example.com');
		const pages = await pagesToCheck(page.request);
		// Grows with the pages found, so a new page never turns this into a timeout.
		test.setTimeout(60_000 + pages.length * PER_PAGE_MS);
		await setTheme(page, scheme);
		const problems: string[] = [];
		for (const p of pages) {
			await open(page, p.path);
			if (/\/(bench|soak)$/.test(p.routeId))
				await expect(page.getByTestId('link-state'))
					.toHaveText(/^Connected$/, { timeout: 30_000 })
					.catch(() => {});
			problems.push(...describe(p.path, scheme, await axeViolations(page)));
		}
		expect(problems, 'WCAG 2.2 AA violations').toEqual([]);
	});
}

test('the sign-in and safety pages pass the WCAG 2.2 AA checks signed out', async ({ page }) => {
	const problems: string[] = [];
	for (const scheme of SCHEMES) {
		await page.goto('/login');
		await setTheme(page, scheme);
		for (const path of PUBLIC_PAGES) {
			await open(page, path);
			problems.push(...describe(path, scheme, await axeViolations(page)));
		}
	}
	expect(problems, 'WCAG 2.2 AA violations').toEqual([]);
});
