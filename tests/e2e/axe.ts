// axe-core run inside a page against WCAG 2.2 AA, for the accessibility specs. The page's CSP
// refuses injected scripts, so a context that uses this sets `bypassCSP: true`.
import type { Page } from '@playwright/test';
import { createRequire } from 'node:module';

export const AXE_PATH = createRequire(import.meta.url).resolve('axe-core/axe.min.js');
/** WCAG 2.2 AA as axe tags its rules (2.2 adds only AA rules of its own, tagged wcag22aa). */
export const WCAG_TAGS = ['wcag2a', 'wcag2aa', 'wcag21a', 'wcag21aa', 'wcag22aa'];

export interface AxeViolation {
	id: string;
	impact: string | null;
	help: string;
	nodes: { target: string[]; failureSummary?: string }[];
}

export async function axeViolations(page: Page): Promise<AxeViolation[]> {
	await page.addScriptTag({ path: AXE_PATH });
	return page.evaluate(async (tags) => {
		const axe = (
			window as unknown as {
				axe: { run: (ctx: unknown, opts: unknown) => Promise<{ violations: AxeViolation[] }> };
			}
		).axe;
		const r = await axe.run(document, {
			runOnly: { type: 'tag', values: tags },
			resultTypes: ['violations']
		});
		return r.violations.map((v) => ({
			id: v.id,
			impact: v.impact,
			help: v.help,
			nodes: v.nodes.slice(0, 5).map((n) => ({ target: n.target, failureSummary: n.failureSummary }))
		}));
	}, WCAG_TAGS);
}
