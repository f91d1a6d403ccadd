// Scan page against the registry's items. Becomes scan-registry.spec.ts once the registry tables
// are on this branch; until then Playwright does not collect it.
import { test, expect } from '@playwright/test';

test('an unknown code is refused on the scan page', async ({ page }) => {
	await page.goto('/sign-in?next=/scan');
	await page.getByLabel(/e-?mail/i).fill('curator@brightwater.example');
	await page.getByLabel(/password/i).fill('brightwater-demo');
	await page.getByRole('button', { name: /sign in/i }).click();
	await expect(page).toHaveURL(/\/scan$/);
	await page.getByLabel('Item code or label link').fill('TRN-99999-N'); // valid check character, no such item
	await page.keyboard.press('Enter');
	await expect(page.getByTestId('scan-refusal')).toContainText('No such item here');
	await expect(page).toHaveURL(/\/scan$/);
});
