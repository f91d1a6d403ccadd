import { test, expect, type Page } from '@playwright/test';

async function signIn(page: Page, email: string) {
	await page.goto('/sign-in');
	await page.getByLabel('E-mail address').fill(email);
	await page.getByLabel('Password').fill('brightwater-demo');
	await page.getByRole('button', { name: 'Sign in' }).last().click();
	await page.waitForURL((u) => !u.pathname.startsWith('/sign-in'));
}

test('a curator splits a demo specimen into three aliquots and sees lineage and ledger update', async ({ page }) => {
	await signIn(page, 'curator@brightwater.example');
	await page.goto('/items');
	await page.getByLabel('Code or text').fill('broken face exposing matrix');
	const link = page.getByRole('table').getByRole('link', { name: /^HLF-\d{5}\/[0-9A-Z]$/ }).first();
	await expect(page.getByRole('table').getByRole('row')).toHaveCount(2);
	const code = (await link.textContent())!.trim();
	await link.click();
	await expect(page.getByTestId('item-code')).toHaveText(code);
	const ledgerRows = page.getByTestId('ledger').locator('tbody tr');
	const before = await ledgerRows.count();
	await expect(page.getByTestId('lineage-tree')).toContainText('0 direct aliquots');

	await page.getByRole('link', { name: 'Split into aliquots' }).click();
	await page.getByRole('button', { name: 'Add an aliquot' }).click();
	const masses = ['2.500', '3.250', '4.000'];
	for (const [i, mg] of masses.entries()) await page.getByLabel(`Aliquot ${i + 1} (mg)`).fill(mg);
	// the verdict is there before anything is sent
	await expect(page.getByTestId('verdict')).toContainText('The budget holds');
	await expect(page.getByTestId('preview')).toContainText('−9.750 mg');
	await page.getByLabel('Aliquot 3 (mg)').fill('99999');
	await expect(page.getByTestId('verdict')).toContainText('Refused');
	await expect(page.getByRole('button', { name: 'Record the split' })).toBeDisabled();
	await page.getByLabel('Aliquot 3 (mg)').fill('4.000');
	await page.getByRole('button', { name: 'Record the split' }).click();

	await page.waitForURL(new RegExp(`/items/${encodeURIComponent(code)}\\?split=`));
	const tree = page.getByTestId('lineage-tree');
	await expect(tree).toContainText('3 direct aliquots');
	const children = tree.locator(`[data-children-of="${code}"] > li`);
	await expect(children).toHaveCount(3);
	for (const mg of masses) await expect(children.filter({ hasText: `${mg} mg` })).toHaveCount(1);
	await expect(ledgerRows).toHaveCount(before + 3);
	await expect(page.getByTestId('ledger')).toContainText('given to aliquot');
	await expect(page.getByTestId('budget')).toContainText('−9.750 mg');
	await expect(page.getByText('Balanced to the microgram.')).toBeVisible();

	// a child's own page traces back to the parent and opens its ledger with the mass it received
	await children.getByRole('link').first().click();
	await expect(page.getByRole('list', { name: 'Ancestors, parent specimen first' })).toContainText(code);
	await expect(page.getByTestId('ledger')).toContainText('split from parent');
});

test('the lineage tree opens in place, one level at a time, from the API', async ({ page }) => {
	await signIn(page, 'auditor@brightwater.example');
	await page.goto('/items?collection=TRN&kind=specimen');
	await page.getByRole('table').getByRole('link').first().click();
	const tree = page.getByTestId('lineage-tree');
	const toggle = tree.getByRole('button', { name: /^Open the \d+ aliquots of/ }).first();
	const label = (await toggle.getAttribute('aria-label'))!;
	const [, n, child] = /Open the (\d+) aliquots of (\S+)/.exec(label)!;
	const fetched = page.waitForResponse((r) => r.url().includes(`/api/items/${encodeURIComponent(child)}/lineage?depth=1`) && r.status() === 200);
	await toggle.click();
	await fetched;
	await expect(tree.locator(`[data-children-of="${child}"] > li`)).toHaveCount(Number(n));
	await expect(tree.getByRole('button', { name: `Close the ${n} aliquots of ${child}` })).toHaveAttribute('aria-expanded', 'true');
});

test('a mistyped code in the items search says so instead of showing another item', async ({ page }) => {
	await signIn(page, 'curator@brightwater.example');
	await page.goto('/items?collection=TRN');
	const first = (await page.getByRole('table').getByRole('link').first().textContent())!.trim();
	const wrong = first.slice(0, -1) + (first.endsWith('A') ? 'B' : 'A');
	await page.getByLabel('Code or text').fill(wrong);
	await expect(page.getByRole('alert')).toContainText('check character');
	await expect(page.getByRole('table').getByRole('link')).toHaveCount(0);
});

test('a curator imports specimens from CSV: per-row errors first, then all rows with a progress bar', async ({ page }) => {
	await signIn(page, 'curator@brightwater.example');
	await page.goto('/items/import');
	const header = 'collection,mass_mg,description,container,storage_place';
	const good = Array.from({ length: 30 }, (_, i) => `HLF,${(2 + i / 100).toFixed(3)},e2e import fragment ${i + 1},jar,C-7`);
	const file = (rows: string[]) => ({ name: 'specimens.csv', mimeType: 'text/csv', buffer: Buffer.from([header, ...rows].join('\n')) });

	await page.getByLabel('CSV file').setInputFiles(file([...good.slice(0, 2), 'HLF,1.2345,too fine,jar,C-7']));
	const preview = page.getByTestId('import-preview');
	await expect(preview.locator('tbody tr')).toHaveCount(3);
	await expect(preview.locator('tbody tr').nth(2)).toContainText('more decimals than a microgram');
	await expect(page.getByRole('button', { name: 'Import all 3 rows' })).toBeDisabled();

	await page.getByLabel('CSV file').setInputFiles(file(good));
	await expect(page.getByText('30 of 30 rows are ready')).toBeVisible();
	await page.getByRole('button', { name: 'Import all 30 rows' }).click();
	await expect(page.getByRole('progressbar', { name: 'Rows imported' })).toHaveAttribute('value', '30');
	await expect(page.getByText(/Imported 30 specimens/)).toBeVisible();

	await page.goto('/items?q=e2e%20import%20fragment');
	await expect(page.getByRole('table').getByRole('link')).toHaveCount(30);
});

test('an administrator changes a collection rule and sees it saved', async ({ page }) => {
	await signIn(page, 'admin@brightwater.example');
	await page.goto('/collections');
	const ice = page.getByRole('region', { name: /ICE/ });
	await ice.getByText('Change the rules of ICE').click();
	await ice.getByLabel('Pristine reserve (%)').fill('150');
	await ice.getByRole('button', { name: 'Save the rules' }).click();
	await expect(ice.getByRole('alert')).toContainText('Check the marked rules');
	await ice.getByLabel('Pristine reserve (%)').fill('30');
	await ice.getByRole('button', { name: 'Save the rules' }).click();
	await expect(ice.getByRole('status')).toContainText('Rules saved');
	await page.reload();
	await expect(page.getByRole('region', { name: /ICE/ })).toContainText('30.0 % kept back');
});

test('a lab member is told how many related items are held elsewhere, one or many', async ({ page }) => {
	await signIn(page, 'analyst@fennick.example');
	// the lab's items with what each one's page withholds (its parent and children, as the page asks)
	const items = (await (await page.request.get('/api/items?limit=100')).json()).items as { code: string }[];
	const withheld = new Map<number, string>();
	for (const { code } of items) {
		const n = (await (await page.request.get(`/api/items/${code}/lineage?depth=1`)).json()).withheld as number;
		if (n > 0 && !withheld.has(Math.min(n, 2))) withheld.set(Math.min(n, 2), code);
	}
	// the demo lends the lab an aliquot straight from a parent specimen the facility keeps
	expect(withheld.has(1)).toBe(true);
	for (const [n, code] of withheld) {
		await page.goto(`/items/${code}`);
		await expect(page.getByTestId('item-code')).toHaveText(code);
		const lineage = await (await page.request.get(`/api/items/${code}/lineage?depth=1`)).json();
		const sentence = n === 1 ? '1 related item is' : `${lineage.withheld} related items are`;
		await expect(page.getByText(/held elsewhere and not shown to your lab/)).toHaveText(`${sentence} held elsewhere and not shown to your lab.`);
	}
});
