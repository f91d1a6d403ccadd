// The cautions follow the work a page leads into (src/lib/cautions.ts): the handling-session form
// updates them as the atmosphere and tools are chosen, the split page shows the collection's
// glovebox and cutting cautions, and the item page links to its label. Codes come from the API.
import { test, expect, type Page } from '@playwright/test';
import AxeBuilder from '@axe-core/playwright';

const PASSWORD = process.env.REGOLOG_DEMO_PASSWORD || 'brightwater-demo';

async function signIn(page: Page) {
	const r = await page.request.post('/api/auth/sign-in', { data: { email: 'curator@brightwater.example', password: PASSWORD } });
	expect(r.status()).toBe(200);
}

async function serious(page: Page) {
	const result = await new AxeBuilder({ page }).withTags(['wcag2a', 'wcag2aa', 'wcag21a', 'wcag21aa']).analyze();
	return result.violations.filter((v) => v.impact === 'serious' || v.impact === 'critical').map((v) => `${v.id}: ${v.help}`);
}

test('the handling-session form shows the cautions its atmosphere and tools call for', async ({ page }) => {
	await signIn(page);
	await page.goto('/handling/new');
	await page.waitForLoadState('networkidle');
	const cautions = page.getByTestId('handling-cautions');
	await expect(cautions).toHaveCount(0);
	await page.getByLabel('Atmosphere').selectOption('argon_glovebox');
	await expect(cautions).toContainText('Glovebox.');
	await expect(cautions).toContainText('over-pressure');
	await expect(cautions).toContainText('under-pressure');
	await expect(cautions).not.toContainText('Cutting and sharp tools');
	await page.getByLabel(/Diamond wire saw/).check();
	await expect(cautions).toContainText('Cutting and sharp tools.');
	await page.getByLabel('Atmosphere').selectOption('vacuum');
	await expect(cautions).toContainText('Vacuum chamber.');
	await expect(cautions).not.toContainText('Glovebox.');
	await expect(cautions).toContainText('local regulations');
	expect(await serious(page)).toEqual([]);
});

test('the split page cautions about the gloveboxes and cutting, and the item page links to its label', async ({ page }) => {
	await signIn(page);
	const list = await (await page.request.get('/api/items?collection=TRN&kind=specimen&limit=1')).json();
	const code = list.items[0].code as string;
	await page.goto(`/items/${encodeURIComponent(code)}`);
	await page.getByRole('link', { name: 'Print label' }).click();
	await expect(page).toHaveURL(/\/labels\?codes=/);
	await expect(page.getByLabel(/Item codes, one a line/)).toHaveValue(code);

	await page.goto(`/items/${encodeURIComponent(code)}/split`);
	await page.waitForLoadState('networkidle');
	const cautions = page.getByTestId('handling-cautions');
	await expect(cautions).toContainText('Glovebox.');
	await expect(cautions).toContainText('Cutting and sharp tools.');
	await expect(cautions).not.toContainText('Vacuum chamber.');
	expect(await serious(page)).toEqual([]);
});
