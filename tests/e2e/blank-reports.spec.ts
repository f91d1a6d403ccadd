import { test, expect, type Page } from '@playwright/test';
import AxeBuilder from '@axe-core/playwright';

async function signInAsFennick(page: Page, next: string) {
	await page.goto(`/sign-in?next=${next}`);
	await page.getByLabel(/e-?mail/i).fill('analyst@fennick.example');
	await page.getByLabel(/password/i).fill('brightwater-demo');
	await page.getByRole('button', { name: /sign in/i }).click();
	await expect(page).toHaveURL(new RegExp(`${next}$`));
}

test('a lab member uploads the demo blank-control table with the progress shown, and reads the flags', async ({ page }) => {
	await signInAsFennick(page, '/reports');

	// the seeded demo report's original table is the file to upload again
	await page.getByRole('link', { name: /Hot-water extract of a cell 1 aliquot/ }).first().click();
	await expect(page.getByTestId('report-title')).toBeVisible();
	const [download] = await Promise.all([page.waitForEvent('download'), page.getByTestId('original-file').click()]);
	const file = await download.path();
	expect(download.suggestedFilename()).toBe('fennick-cell-1-run1.csv');

	await page.goto('/reports/new');
	await page.getByLabel('Title').fill('Cell 1 aliquot, repeat injection');
	await page.getByLabel(/CSV file/).setInputFiles(file);
	await page.getByRole('button', { name: 'Upload and compute' }).click();
	const bar = page.getByRole('progressbar', { name: 'Upload of the blank-control table' });
	await expect(bar).toBeVisible();
	await expect(bar).toHaveAttribute('aria-valuenow', '100');
	await expect(page.getByTestId('upload-done')).toContainText('flagged result');
	await page.getByRole('link', { name: 'Open the report' }).click();

	await expect(page.getByTestId('report-title')).toHaveText('Cell 1 aliquot, repeat injection');
	const flags = page.getByTestId('flag-list');
	await expect(flags).toContainText('possible terrestrial contamination');
	await expect(flags).toContainText('below the detection limit');
	await expect(flags).toContainText('blank-dominated');
	await expect(page.getByTestId('limitations')).toContainText('No detection or quantification limit can be estimated from one blank.');
	await expect(page.getByTestId('blank-chart').first()).toBeVisible();
	await expect(page.getByTestId('ee-chart')).toBeVisible();

	// every ee says whether it is quoted and why, with ν_eff, k, the interval and both verdicts
	const ee = page.getByTestId('ee-table');
	await expect(ee).toContainText('ν_eff');
	await expect(ee).toContainText('semi-quantitative');
	await expect(ee).toContainText('not quantifiable');
	await expect(ee).toContainText('weak limits');
	await expect(ee).toContainText('(Holm, p̃ = 0.0');
	await expect(page.getByTestId('ee-why').first()).toContainText(/Quoted|Not quantifiable|Semi-quantitative/);
	await expect(page.getByTestId('limits-valine')).toContainText('weak: ≈');
	await expect(page.getByTestId('method-notes')).toContainText('Welch–Satterthwaite');
	await expect(page.getByTestId('report-settings')).toContainText('Holm');
	const axe = await new AxeBuilder({ page }).withTags(['wcag2a', 'wcag2aa', 'wcag21a', 'wcag21aa']).analyze();
	expect(axe.violations.map((v) => v.id)).toEqual([]);
});

test('a bad table is refused on the upload page with its row and column', async ({ page }) => {
	await signInAsFennick(page, '/reports/new');
	await page.getByLabel('Title').fill('semicolon table');
	await page.getByLabel(/CSV file/).setInputFiles({ name: 'bad.csv', mimeType: 'text/csv', buffer: Buffer.from('analyte;enantiomer;sample_or_blank;replicate;value;unit\nalanine;L;TRN-00011/U;1;2;nmol/g\n') });
	await page.getByRole('button', { name: 'Upload and compute' }).click();
	await expect(page.getByTestId('upload-problem')).toContainText('row 1: the columns are separated by semicolons');
});
