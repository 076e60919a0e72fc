// Steps every end-to-end spec shares: waiting for hydration and signing in as a demo user.
import { expect, type Page } from '@playwright/test';

export const DEMO_PASSWORD = 'bench-demo-2026';

/** After a full page load, wait until the app has hydrated (inputs wired to their handlers). */
export async function ready(page: Page): Promise<void> {
	await page.locator('html[data-hydrated="true"]').waitFor({ state: 'attached' });
}

/** Sign in through the form as a demo user and land on the job queue. */
export async function signIn(page: Page, email: string): Promise<void> {
	await page.goto('/login');
	await ready(page);
	await page.getByLabel('E-mail').fill(email);
	await page.getByLabel('Password').fill(DEMO_PASSWORD);
	await page.getByRole('button', { name: 'Sign in' }).click();
	await expect(page).toHaveURL(/\/jobs$/);
	await ready(page);
}
