import { test, expect, type Page } from '@playwright/test';

// Cell 1 of the demo's Tarnwick return, the first TRN item; check character Y (ISO/IEC 7064:2003 MOD 37,36)
const GOOD = 'TRN-00001/Y';
// the same code as labels printed before the slash carry it
const OLD = 'TRN-00001-Y';
// how Regolog's links and QR codes write it: the slash percent-encoded
const PATH = encodeURIComponent(GOOD);

async function signIn(page: Page) {
	await page.goto('/sign-in?next=/scan');
	await page.getByLabel(/e-?mail/i).fill('curator@brightwater.example');
	await page.getByLabel(/password/i).fill('brightwater-demo');
	await page.getByRole('button', { name: /sign in/i }).click();
	// the path itself: the sign-in page's own URL ends in ?next=/scan too
	await page.waitForURL((u) => u.pathname === '/scan');
	await expect(page.getByLabel('Item code or label link')).toBeFocused();
}

test.describe('scan page', () => {
	test.beforeEach(async ({ page }) => signIn(page));

	test('the field has the focus, and a scanned code opens the item', async ({ page, baseURL }) => {
		const field = page.getByLabel('Item code or label link');
		await expect(field).toBeFocused();
		// A keyboard-wedge scanner types the code and presses Enter.
		await page.keyboard.type(GOOD.toLowerCase());
		await page.keyboard.press('Enter');
		await expect(page).toHaveURL(`${baseURL}/items/${PATH}`);
		await expect(page.getByTestId('item-code')).toHaveText(GOOD);
	});

	test('a code in the older form, with a hyphen before the check character, opens the same item', async ({ page, baseURL }) => {
		await page.keyboard.type(OLD);
		await page.keyboard.press('Enter');
		await expect(page).toHaveURL(`${baseURL}/items/${PATH}`);
		await expect(page.getByTestId('item-code')).toHaveText(GOOD);
	});

	test('a label URL from this origin opens the item', async ({ page, baseURL }) => {
		for (const link of [`${baseURL}/items/${PATH}`, `${baseURL}/items/${OLD}`, `${baseURL}/items/${GOOD}`]) {
			await page.goto('/scan');
			await page.getByLabel('Item code or label link').fill(link);
			await page.keyboard.press('Enter');
			await expect(page, link).toHaveURL(`${baseURL}/items/${PATH}`);
			await expect(page.getByTestId('item-code')).toHaveText(GOOD);
		}
	});

	test('links to an item work with the slash encoded, left as it is, and in the older form', async ({ page }) => {
		for (const path of [`/items/${PATH}`, `/items/${GOOD}`, `/items/${OLD}`]) {
			const r = await page.goto(path);
			expect(r?.status(), path).toBe(200);
			await expect(page.getByTestId('item-code')).toHaveText(GOOD);
		}
		// the split page and the item's API, through the item page's own link
		await page.goto(`/items/${PATH}`);
		await page.getByRole('link', { name: 'Split into aliquots' }).click();
		await expect(page).toHaveURL(new RegExp(`/items/${PATH}/split$`));
		await expect(page.getByRole('heading', { level: 1 })).toContainText(GOOD);
		for (const path of [`/api/items/${PATH}/lineage`, `/api/items/${GOOD}/ledger`, `/api/items/${OLD}`]) {
			const r = await page.request.get(path);
			expect(r.status(), path).toBe(200);
		}
	});

	test('a wrong check character is refused and the field is ready for the next scan', async ({ page }) => {
		const field = page.getByLabel('Item code or label link');
		await field.fill('TRN-00001/Z');
		await page.keyboard.press('Enter');
		const refusal = page.getByTestId('scan-refusal');
		await expect(refusal).toContainText('Wrong check character');
		await expect(refusal).toContainText('expected Y');
		await expect(page).toHaveURL(/\/scan$/);
		await expect(field).toBeFocused();
		await expect(field).toHaveValue('');
	});

	test('a URL from another origin is refused', async ({ page }) => {
		await page.getByLabel('Item code or label link').fill(`https://elsewhere.example/items/${GOOD}`);
		await page.getByRole('button', { name: 'Open item' }).click();
		const refusal = page.getByTestId('scan-refusal');
		await expect(refusal).toContainText('Not a Regolog label');
		await expect(refusal).toContainText('elsewhere.example');
		await expect(page).toHaveURL(/\/scan$/);
	});
});

test('the scan page asks for sign-in first', async ({ page }) => {
	await page.goto('/scan');
	await expect(page).toHaveURL(/\/sign-in\?next=%2Fscan/);
});
