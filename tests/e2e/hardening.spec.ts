// Every main page of every role: no Content Security Policy violation and no serious or critical
// accessibility finding (axe-core, WCAG 2.1 A and AA rules); the split flow by keyboard alone.
import { test, expect, type Page } from '@playwright/test';
import AxeBuilder from '@axe-core/playwright';
import { navFor } from '../../src/lib/nav';
import { walkRoutes } from '../helpers/routes';

const PASSWORD = process.env.REGOLOG_DEMO_PASSWORD || 'brightwater-demo';
const ROLES = [
	{ role: 'curator', email: 'curator@brightwater.example' },
	{ role: 'lab_member', email: 'analyst@fennick.example' },
	{ role: 'auditor', email: 'auditor@brightwater.example' },
	{ role: 'admin', email: 'admin@brightwater.example' }
] as const;
const PAGES = new Set(walkRoutes().filter((r) => !r.id.startsWith('/api') && r.methods.includes('GET')).map((r) => r.id));
const FACILITY_ITEM = encodeURIComponent('TRN-00001/Y');

async function watchCsp(page: Page): Promise<() => Promise<string[]>> {
	const console: string[] = [];
	page.on('console', (m) => {
		if (/Content Security Policy|Refused to (load|execute|apply)/i.test(m.text())) console.push(m.text());
	});
	await page.addInitScript(() => {
		const w = window as unknown as { __cspViolations: string[] };
		w.__cspViolations = [];
		document.addEventListener('securitypolicyviolation', (e) => w.__cspViolations.push(`${e.violatedDirective} ${e.blockedURI}`));
	});
	return async () => [...console, ...(await page.evaluate(() => (window as unknown as { __cspViolations: string[] }).__cspViolations))];
}

async function signIn(page: Page, email: string) {
	const r = await page.request.post('/api/auth/sign-in', { data: { email, password: PASSWORD } });
	expect(r.status()).toBe(200);
}

async function seriousFindings(page: Page) {
	const result = await new AxeBuilder({ page }).withTags(['wcag2a', 'wcag2aa', 'wcag21a', 'wcag21aa']).analyze();
	return result.violations
		.filter((v) => v.impact === 'serious' || v.impact === 'critical')
		.map((v) => `${v.id} (${v.impact}): ${v.help} — ${v.nodes.map((n) => n.target.join(' ')).slice(0, 3).join(', ')}`);
}

async function check(page: Page, path: string, violations: () => Promise<string[]>) {
	const res = await page.goto(path);
	expect(res?.status(), path).toBeLessThan(400);
	await page.waitForLoadState('networkidle');
	expect(await violations(), `CSP violations on ${path}`).toEqual([]);
	expect(await seriousFindings(page), `accessibility on ${path}`).toEqual([]);
}

test('signed out: the overview and sign-in pages', async ({ page }) => {
	const violations = await watchCsp(page);
	for (const path of ['/', '/sign-in', '/reset']) await check(page, path, violations);
});

for (const { role, email } of ROLES) {
	test(`${role}: every main page`, async ({ page }) => {
		const violations = await watchCsp(page);
		await signIn(page, email);
		const paths = navFor(role).map((n) => n.href).filter((h) => PAGES.has(h));
		if (role !== 'lab_member') paths.push(`/items/${FACILITY_ITEM}`);
		if (role === 'curator' || role === 'admin') paths.push(`/items/${FACILITY_ITEM}/split`);
		expect(paths.length).toBeGreaterThan(2);
		for (const path of paths) await check(page, path, violations);
	});
}

test('the split flow done with the keyboard alone', async ({ page }) => {
	const violations = await watchCsp(page);
	await signIn(page, 'curator@brightwater.example');
	const made = await page.request.post('/api/items', { data: { collection: 'HLF', massUg: 1_000_000, description: 'keyboard split specimen' } });
	expect(made.status()).toBe(201);
	const code = (await made.json()).item.code as string;
	await page.goto(`/items/${code}/split`);
	await page.waitForLoadState('networkidle');

	const focused = () => page.evaluate(() => {
		const a = document.activeElement as HTMLInputElement | HTMLButtonElement | null;
		return { tag: a?.tagName ?? '', name: a?.getAttribute('name') ?? '', type: a?.getAttribute('type') ?? '', text: a?.textContent?.trim() ?? '' };
	});
	async function tabTo(want: (f: Awaited<ReturnType<typeof focused>>) => boolean, what: string) {
		for (let i = 0; i < 60; i++) {
			await page.keyboard.press('Tab');
			if (want(await focused())) return;
		}
		throw new Error(`Tab never reached ${what}`);
	}
	await tabTo((f) => f.name === 'child-0', 'the first aliquot');
	await page.keyboard.type('100');
	await tabTo((f) => f.name === 'child-1', 'the second aliquot');
	await page.keyboard.type('200');
	await tabTo((f) => f.tag === 'BUTTON' && /record the split/i.test(f.text), 'the split button');
	await page.keyboard.press('Enter');
	await expect(page).toHaveURL(new RegExp(`/items/${encodeURIComponent(code)}\\?split=`));
	const item = await (await page.request.get(`/api/items/${code}`)).json();
	expect(item.item?.massUg ?? item.massUg).toBe(700_000);
	expect(await violations()).toEqual([]);
});
