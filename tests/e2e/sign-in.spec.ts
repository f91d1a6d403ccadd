import { test, expect, type Route } from '@playwright/test';

test('what is typed into the sign-in form before the page has started keeps its place, and signs in', async ({ page }) => {
	// Hold the page's scripts back, so the e-mail address and password are typed into the server's
	// HTML before the page starts in the browser (a quick typist, or a password manager).
	const held: Route[] = [];
	const script = (u: URL) => u.pathname.startsWith('/_app/immutable/') && u.pathname.endsWith('.js');
	let hold = true;
	await page.route(script, (route) => (hold ? void held.push(route) : route.continue()));
	await page.goto('/sign-in', { waitUntil: 'commit' });
	await page.getByLabel('E-mail address').fill('curator@brightwater.example');
	await page.getByLabel('Password').fill('brightwater-demo');
	expect(held.length, 'the page has not started yet').toBeGreaterThan(0);
	hold = false;
	for (const r of held.splice(0)) await r.continue();
	await page.waitForLoadState('networkidle');
	await expect(page.getByLabel('E-mail address')).toHaveValue('curator@brightwater.example');
	await expect(page.getByLabel('Password')).toHaveValue('brightwater-demo');
	await page.getByRole('button', { name: 'Sign in' }).last().click();
	await page.waitForURL((u) => !u.pathname.startsWith('/sign-in'));
	await expect(page.getByText('Curator', { exact: true })).toBeVisible();
});
