import { test, expect, type Page } from '@playwright/test';

async function signIn(page: Page, email: string, next: string) {
	await page.goto(`/sign-in?next=${encodeURIComponent(next)}`);
	await page.getByLabel(/e-?mail/i).fill(email);
	await page.getByLabel(/password/i).fill('brightwater-demo');
	await page.getByRole('button', { name: /sign in/i }).click();
}

test('a curator records a glovebox session with a witness coupon; the auditor sees it and verifies the trail', async ({ page, browser }) => {
	await signIn(page, 'curator@brightwater.example', '/handling');
	await expect(page).toHaveURL(/\/handling$/);
	const reg = async (body: object) => {
		const r = await page.request.post('/api/items', { data: body });
		expect(r.status()).toBe(201);
		return (await r.json()).item.code as string;
	};
	const item = await reg({ collection: 'TRN', massUg: 12_000, description: 'Regolith for the session form test' });
	const coupon = await reg({ collection: 'TRN', kind: 'blank', massUg: 1, description: 'Witness coupon for the session form test' });

	await page.goto(`/handling/new?item=${item}`);
	await expect(page.getByText(/Follow your institution's safety rules/)).toBeVisible();
	const day = new Date(Date.now() - 3 * 86_400_000).toISOString().slice(0, 10);
	await page.getByLabel('Atmosphere').selectOption('nitrogen_glovebox');
	await page.getByLabel('Start (UTC)').fill(`${day}T09:00`);
	await page.getByLabel('End (UTC)').fill(`${day}T09:40`);
	await page.getByLabel('Temperature (°C)').fill('21.3');
	await page.getByLabel('Relative humidity (%)').fill('0.4');
	await page.getByLabel(/TRN · PTFE-tipped tweezers/).check();
	await page.getByLabel('Blanks exposed alongside (codes)').fill(coupon);
	await page.getByLabel('Purpose').fill('Form test: transfer into a fresh vial');
	await page.getByRole('button', { name: 'Record session' }).click();
	await expect(page).toHaveURL(/\/handling\?recorded=/);
	await expect(page.getByRole('status')).toContainText('Handling session recorded');
	await expect(page.getByTestId('sessions')).toContainText(coupon);

	const auditorContext = await browser.newContext();
	const auditor = await auditorContext.newPage();
	await signIn(auditor, 'auditor@brightwater.example', `/audit/items/${item}`);
	await expect(auditor).toHaveURL(new RegExp(`/audit/items/${item}$`));
	const history = auditor.getByTestId('history');
	await expect(history).toContainText('Form test: transfer into a fresh vial');
	await expect(history).toContainText(`Blanks exposed alongside: ${coupon}`);
	await auditor.getByRole('button', { name: 'Verify the trail' }).click();
	await expect(auditor.getByTestId('verify-result')).toContainText('Intact');
	await auditorContext.close();
});
