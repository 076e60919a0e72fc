// Phone layout: every page at 390 × 844 (a common phone viewport) must fit its width. A page that
// scrolls sideways hides readouts and buttons off-screen; a wide table or chart scrolls inside its
// own box instead. Pages are found on disk (tests/e2e/pages.ts), so a new page is checked too.
import { expect, test, type Page } from '@playwright/test';
import { pagesToCheck, PUBLIC_PAGES } from './pages';
import { ready, signIn } from './helpers';

const VIEWPORT = { width: 390, height: 844 };

test.use({ viewport: VIEWPORT });

/** How far the document is wider than the viewport, and the widest offenders, to say what to fix. */
async function overflow(page: Page) {
	return page.evaluate(() => {
		const vw = document.documentElement.clientWidth;
		const offenders: string[] = [];
		for (const el of document.body.querySelectorAll<HTMLElement>('*')) {
			const r = el.getBoundingClientRect();
			if (r.right > vw + 0.5 && r.width > 0) {
				// An absolutely positioned element escapes a scroll box that is not positioned itself (a
				// visually hidden label in a scrolling table widens the page): those always count.
				// Otherwise only the outermost offender of each branch (its children overflow because it
				// does), and nothing inside a box that scrolls or clips on its own.
				if (getComputedStyle(el).position !== 'absolute') {
					const parent = el.parentElement?.getBoundingClientRect();
					if (parent && parent.right > vw + 0.5) continue;
					let boxed = false;
					for (let a = el.parentElement; a && a !== document.body; a = a.parentElement)
						if (getComputedStyle(a).overflowX !== 'visible') boxed = true;
					if (boxed) continue;
				}
				const id = el.dataset.testid ? `[data-testid=${el.dataset.testid}]` : '';
				offenders.push(
					`${el.tagName.toLowerCase()}${id}.${[...el.classList].slice(0, 3).join('.')} → ${Math.round(r.right)} px`
				);
			}
		}
		return {
			scrollWidth: document.documentElement.scrollWidth,
			viewportWidth: vw,
			offenders: offenders.slice(0, 8)
		};
	});
}

async function settle(page: Page) {
	await ready(page);
	// Charts size themselves from a ResizeObserver after the first frame.
	await page.evaluate(() => new Promise((r) => requestAnimationFrame(() => requestAnimationFrame(r))));
	await page.waitForLoadState('networkidle').catch(() => {
		/* pages with a live socket never go idle; the frames above are enough */
	});
}

test('every signed-in page fits a 390 px wide phone without scrolling sideways', async ({ page }) => {
	await signIn(page, 'admin@example.com');
	const pages = await pagesToCheck(page.request);
	// Grows with the pages found, so a new page never turns this into a timeout.
	test.setTimeout(60_000 + pages.length * 15_000);
	// The pages the issue names must be among those found (guards against a broken discovery).
	const ids = pages.map((p) => p.routeId);
	for (const must of [
		'/jobs',
		'/jobs/[id]',
		'/jobs/new',
		'/jobs/[id]/bench',
		'/jobs/[id]/soak',
		'/limit-profiles',
		'/account',
		'/admin/users',
		'/admin/settings',
		'/safety'
	])
		expect(ids, 'pages found on disk').toContain(must);

	const problems: string[] = [];
	for (const p of pages) {
		const res = await page.goto(p.path);
		expect(res?.ok(), `${p.path} answered ${res?.status()}`).toBe(true);
		await settle(page);
		// The bench and soak pages fill in once the bridge answers; measure with live content.
		if (/\/(bench|soak)$/.test(p.routeId))
			await expect(page.getByTestId('link-state'))
				.toHaveText(/^Connected$/, { timeout: 30_000 })
				.catch(() => {});
		await page.waitForTimeout(p.routeId.endsWith('/bench') ? 1500 : 0);
		const o = await overflow(page);
		if (o.scrollWidth > o.viewportWidth)
			problems.push(
				`${p.path}: ${o.scrollWidth} px wide in a ${o.viewportWidth} px viewport (${o.offenders.join('; ') || 'no single offender'})`
			);
	}
	expect(problems, 'pages that scroll sideways at 390 px').toEqual([]);
});

test('on a phone the bench shows the readings before the spectrum, the caution one tap away', async ({
	page
}) => {
	await signIn(page, 'tech1@example.com');
	const pages = await pagesToCheck(page.request);
	const bench = pages.find((p) => p.routeId === '/jobs/[id]/bench')!;
	await page.goto(bench.path);
	await ready(page);
	await expect(page.getByTestId('link-state')).toHaveText(/^Connected$/, { timeout: 30_000 });
	const top = async (testId: string) => (await page.getByTestId(testId).boundingBox())!.y;
	expect(await top('readouts')).toBeLessThan(await top('spectrum'));
	// The link to the caution sits in the page header, above everything else.
	const show = page.getByTestId('show-caution');
	await expect(show).toBeInViewport();
	await show.click();
	await expect(page.getByTestId('caution')).toHaveAttribute('open', '');
	await expect(page.getByTestId('caution')).toBeInViewport();
});

test('the public pages fit a 390 px wide phone signed out', async ({ page }) => {
	const problems: string[] = [];
	for (const path of PUBLIC_PAGES) {
		await page.goto(path);
		await settle(page);
		const o = await overflow(page);
		if (o.scrollWidth > o.viewportWidth)
			problems.push(`${path}: ${o.scrollWidth} px (${o.offenders.join('; ')})`);
	}
	expect(problems).toEqual([]);
});
