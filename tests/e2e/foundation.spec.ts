import { test, expect } from '@playwright/test';

test('home page renders in the bundled font and asks nothing of any other host', async ({ page, baseURL }) => {
	const foreign: string[] = [];
	page.on('request', (req) => {
		const u = new URL(req.url());
		if (!['127.0.0.1', 'localhost'].includes(u.hostname) && u.protocol !== 'data:') foreign.push(req.url());
	});
	await page.goto('/');
	await expect(page.getByRole('link', { name: 'Regolog home' })).toBeVisible();
	await expect(page.getByRole('navigation', { name: 'Main' })).toBeVisible();
	await expect(page.locator('footer')).toContainText('Regolog');

	const family = await page.evaluate(() => getComputedStyle(document.body).fontFamily);
	expect(family).toContain('Atkinson Hyperlegible');
	await page.evaluate(() => document.fonts.ready);
	const loaded = await page.evaluate(() =>
		[...document.fonts].filter((f) => f.family.replace(/"/g, '') === 'Atkinson Hyperlegible' && f.status === 'loaded').length
	);
	expect(loaded).toBeGreaterThan(0);
	expect(await page.evaluate(() => document.fonts.check('16px "Atkinson Hyperlegible"'))).toBe(true);
	expect(foreign).toEqual([]);
	expect(new URL(baseURL!).hostname).toBe('127.0.0.1');
});

test('health endpoint answers ok for every part', async ({ request }) => {
	const r = await request.get('/api/health');
	expect(r.status()).toBe(200);
	expect(await r.json()).toEqual({ db: 'ok', storage: 'ok', mail: 'ok' });
});
