import { chromium } from '@playwright/test';
const B = 'http://127.0.0.1:22006';
const args = ['--no-sandbox', '--disable-gpu', '--disable-background-networking', '--disable-component-update', '--disable-sync', '--no-first-run'];
const browser = await chromium.launch({ executablePath: '/usr/bin/chromium', args });
async function as(email) {
	const ctx = await browser.newContext({ viewport: { width: 1400, height: 1000 } });
	const page = await ctx.newPage();
	await page.goto(`${B}/sign-in`);
	await page.locator('#email').fill(email);
	await page.locator('#password').fill('brightwater-demo');
	await page.getByRole('button', { name: /sign in/i }).click();
	await page.waitForURL((u) => !u.pathname.startsWith('/sign-in'));
	return page;
}
const which = process.argv[2] ?? 'all';
const lab = await as('analyst@fennick.example');
await lab.goto(`${B}/offer?collection=TRN&neverAmbient=true`);
await lab.waitForTimeout(800);
await lab.screenshot({ path: '/tmp/shots17/offer-lab.png', fullPage: true });
const cur = await as('curator@brightwater.example');
await cur.goto(`${B}/offer?collection=HLF&sort=ambient&dir=desc`);
await cur.waitForTimeout(800);
await cur.screenshot({ path: '/tmp/shots17/offer-curator.png', fullPage: true });
await cur.goto(`${B}/requests?state=in_review`);
const links = await cur.locator('a[href^="/requests/"]').evaluateAll((as) => as.map((a) => a.getAttribute('href')));
let i = 0;
for (const href of [...new Set(links)].filter((h) => /requests\/[0-9a-f-]{36}$/.test(h))) {
	await cur.goto(B + href);
	await cur.waitForSelector('[data-testid="plans"] h3, [data-testid="plan-blocked"]', { timeout: 10000 }).catch(() => {});
	await cur.screenshot({ path: `/tmp/shots17/request-${i++}.png`, fullPage: true });
}
await browser.close();
