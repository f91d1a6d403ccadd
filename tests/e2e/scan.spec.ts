import { test, expect, type Page } from '@playwright/test';

// Chamber A of the demo's Tarnwick return, the first TRN item; check character Y (ISO/IEC 7064:2003 MOD 37,36)
const GOOD = 'TRN-00001-Y';

async function signIn(page: Page) {
	await page.goto('/sign-in?next=/scan');
	await page.getByLabel(/e-?mail/i).fill('curator@brightwater.example');
	await page.getByLabel(/password/i).fill('brightwater-demo');
	await page.getByRole('button', { name: /sign in/i }).click();
	await expect(page).toHaveURL(/\/scan$/);
}

test.describe('scan page', () => {
	test.beforeEach(async ({ page }) => signIn(page));

	test('the field has the focus, and a scanned code opens the item', async ({ page, baseURL }) => {
		const field = page.getByLabel('Item code or label link');
		await expect(field).toBeFocused();
		// A keyboard-wedge scanner types the code and presses Enter.
		await page.keyboard.type(GOOD.toLowerCase());
		await page.keyboard.press('Enter');
		await expect(page).toHaveURL(`${baseURL}/items/${GOOD}`);
	});

	test('a label URL from this origin opens the item', async ({ page, baseURL }) => {
		await page.getByLabel('Item code or label link').fill(`${baseURL}/items/${GOOD}`);
		await page.keyboard.press('Enter');
		await expect(page).toHaveURL(`${baseURL}/items/${GOOD}`);
	});

	test('a wrong check character is refused and the field is ready for the next scan', async ({ page }) => {
		const field = page.getByLabel('Item code or label link');
		await field.fill('TRN-00001-Z');
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
