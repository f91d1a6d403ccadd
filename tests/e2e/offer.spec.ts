import { test, expect, type Browser, type Page } from '@playwright/test';
import AxeBuilder from '@axe-core/playwright';

const PASSWORD = process.env.REGOLOG_DEMO_PASSWORD || 'brightwater-demo';

async function signIn(browser: Browser, email: string): Promise<Page> {
	const context = await browser.newContext();
	const page = await context.newPage();
	const r = await page.request.post('/api/auth/sign-in', { data: { email, password: PASSWORD } });
	expect(r.status()).toBe(200);
	return page;
}

async function axe(page: Page, where: string) {
	const result = await new AxeBuilder({ page }).withTags(['wcag2a', 'wcag2aa', 'wcag21a', 'wcag21aa']).analyze();
	const serious = result.violations
		.filter((v) => v.impact === 'serious' || v.impact === 'critical')
		.map((v) => `${v.id} (${v.impact}): ${v.help} — ${v.nodes.map((n) => n.target.join(' ')).slice(0, 3).join(', ')}`);
	expect(serious, `accessibility of ${where}`).toEqual([]);
}

test('a lab asks for two pieces never exposed to ambient air; the curator plans, uses the first plan and records the split', async ({ browser }) => {
	const lab = await signIn(browser, 'analyst@fennick.example');
	await lab.goto('/offer');
	await lab.getByRole('link', { name: 'On offer' }).first().waitFor();
	// HLF: the collection with the most to give, whatever other tests have granted from it
	await lab.locator('select[name="collection"]').selectOption('HLF');
	await lab.getByLabel('Never exposed to ambient air').check();
	await expect(lab).toHaveURL(/neverAmbient=true/);
	const rows = lab.getByTestId('offer-row');
	await expect(rows.first()).toBeVisible();
	// every row shown says "never" in its ambient-air column
	const ambient = await rows.evaluateAll((trs) => trs.map((tr) => tr.children[6]?.textContent?.trim()));
	expect(ambient.length).toBeGreaterThan(0);
	for (const a of ambient) expect(a).toBe('never');
	await axe(lab, 'the offer (lab member)');

	const code = await rows.first().getAttribute('data-code');
	await rows.first().getByRole('link', { name: 'Ask for this' }).click();
	await expect(lab).toHaveURL(/\/requests\/new\?/);
	await expect(lab.getByTestId('from-offer')).toContainText(code!);
	await expect(lab.getByTestId('from-offer')).toContainText('never exposed to ambient air');
	await expect(lab.getByLabel('Collection', { exact: true })).toHaveValue('HLF');
	await lab.getByLabel('Mass asked for (mg)').fill('2.000');
	await lab.getByLabel('Number of pieces').fill('2');
	await lab.getByLabel('Analysis plan').fill('Duplicate chiral GC-MS of amino acids with procedural blanks alongside.');
	await lab.getByLabel('Scientific justification').fill('Two pieces let the enantiomer result be replicated independently.');
	await axe(lab, 'the request form filled in from the offer');
	await lab.getByRole('button', { name: 'Submit for review' }).click();
	await expect(lab).toHaveURL(/\/requests\/[0-9a-f-]{36}$/);
	await expect(lab.getByTestId('request-constraints')).toHaveText('never exposed to ambient air');
	await expect(lab.getByTestId('request-pieces')).toContainText('2 of 1.000 mg each');
	await expect(lab.getByTestId('plans')).toHaveCount(0);
	const requestUrl = lab.url();

	const curator = await signIn(browser, 'curator@brightwater.example');
	await curator.goto(requestUrl);
	await expect(curator.getByTestId('request-items')).toHaveText(code!);
	const plans = curator.getByTestId('plan');
	await expect(plans.first()).toBeVisible();
	await expect(plans.first()).toContainText('Plan 1');
	await expect(plans.first()).toContainText(code!);
	await axe(curator, 'the request page with its plans');

	// the preference order re-plans in the browser, with no request to the server
	let planCalls = 0;
	curator.on('request', (r) => {
		if (r.url().includes('/plans')) planCalls++;
	});
	await curator.getByRole('button', { name: 'Move Least added depth up' }).click();
	await expect(curator.getByTestId('plan-order').locator('li').first()).toContainText('Least added depth');
	expect(planCalls).toBe(0);
	await curator.getByRole('button', { name: 'Back to the usual order' }).click();

	await plans.first().getByTestId('use-step').first().click();
	await expect(curator).toHaveURL(new RegExp(`/items/${code}/split\\?`));
	await expect(curator.getByTestId('from-plan')).toBeVisible();
	await expect(curator.locator('input[name="child-0"]')).toHaveValue('1.000');
	await expect(curator.locator('input[name="child-1"]')).toHaveValue('1.000');
	await expect(curator.getByTestId('verdict')).toBeVisible();
	await curator.getByRole('button', { name: 'Record the split' }).click();
	await expect(curator).toHaveURL(/\/requests\/[0-9a-f-]{36}\?split=/);
	await expect(curator.getByTestId('split-recorded')).toContainText('Split recorded');
	const children = new URL(curator.url()).searchParams.get('split')!.split(',');
	expect(children).toHaveLength(2);
	for (const c of children) {
		const item = await curator.request.get(`/api/items/${c}`);
		expect(item.status()).toBe(200);
		expect((await item.json()).item.massUg).toBe(1000);
	}
});

test('a lab member downloads the characterisation of a piece on offer from its row', async ({ browser }) => {
	const lab = await signIn(browser, 'analyst@marrow.example');
	await lab.goto('/offer?collection=HLF');
	const link = lab.getByTestId('offer-document').filter({ hasText: 'Chromatogram: F1-bulk-chromatogram.csv' });
	await expect(link).toBeVisible();
	await expect(lab.getByTestId('offer-document').filter({ hasText: 'Other: F1-characterisation-sheet.pdf' })).toBeVisible();
	const [download] = await Promise.all([lab.waitForEvent('download'), link.click()]);
	expect(download.suggestedFilename()).toBe('F1-bulk-chromatogram.csv');
	const path = await download.path();
	const { readFileSync } = await import('node:fs');
	expect(readFileSync(path!, 'utf8')).toMatch(/^# HLF-\d{5}\/\w bulk extract, demo data \(invented\)\nretention_min,signal_pA\n/);
});
