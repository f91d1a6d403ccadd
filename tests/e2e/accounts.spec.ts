import { test, expect } from '@playwright/test';

const PASSWORD = process.env.REGOLOG_DEMO_PASSWORD || 'brightwater-demo';

const ROLES: { email: string; role: string; sees: string[]; notSees: string[] }[] = [
	{ email: 'admin@brightwater.example', role: 'Administrator', sees: ['Admin', 'Balances', 'Handling'], notSees: ['Our material'] },
	{ email: 'curator@brightwater.example', role: 'Curator', sees: ['Collections', 'Items', 'Balances', 'Requests'], notSees: ['Admin'] },
	{ email: 'auditor@brightwater.example', role: 'Auditor', sees: ['Collections', 'Items', 'Transfers'], notSees: ['Admin', 'Balances'] },
	{ email: 'analyst@fennick.example', role: 'Lab member', sees: ['Our material', 'Requests', 'Blank reports'], notSees: ['Admin', 'Balances', 'Collections'] }
];

for (const r of ROLES) {
	test(`${r.role} signs in through the form and sees their own navigation`, async ({ page }) => {
		await page.goto('/account');
		await expect(page).toHaveURL(/\/sign-in\?next=%2Faccount/);
		await page.getByLabel('E-mail address').fill(r.email);
		await page.getByLabel('Password').fill(PASSWORD);
		await page.getByRole('button', { name: 'Sign in' }).click();
		await expect(page).toHaveURL(/\/account$/);
		const nav = page.getByRole('navigation', { name: 'Main' });
		for (const s of r.sees) await expect(nav.getByRole('link', { name: s, exact: true })).toBeVisible();
		for (const s of r.notSees) await expect(nav.getByRole('link', { name: s, exact: true })).toHaveCount(0);
		await expect(page.getByRole('banner')).toContainText(r.role);
		await page.getByRole('button', { name: 'Sign out' }).click();
		await expect(page).toHaveURL(/\/sign-in$/);
		await page.goto('/account');
		await expect(page).toHaveURL(/\/sign-in/);
	});
}

test('a wrong password shows one message that does not say whether the account exists', async ({ page }) => {
	await page.goto('/sign-in');
	await page.getByLabel('E-mail address').fill('someone@brightwater.example');
	await page.getByLabel('Password').fill('definitely not it');
	await page.getByRole('button', { name: 'Sign in' }).click();
	await expect(page.getByRole('alert')).toContainText('e-mail address or password is not right');
});

test('a curator is refused the admin pages', async ({ page }) => {
	await page.goto('/sign-in');
	await page.getByLabel('E-mail address').fill('curator@brightwater.example');
	await page.getByLabel('Password').fill(PASSWORD);
	await page.getByRole('button', { name: 'Sign in' }).click();
	await expect(page).toHaveURL(/\/$/);
	const r = await page.goto('/admin/users');
	expect(r?.status()).toBe(403);
	await expect(page.locator('body')).toContainText('may not open this page');
});
