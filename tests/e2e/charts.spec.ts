import { test, expect, type Locator, type Page, type TestInfo } from '@playwright/test';
import AxeBuilder from '@axe-core/playwright';

// Each chart of the demo, opened as its readers open it, checked for round ticks, a text
// alternative and axe's WCAG rules, and photographed into this test's output folder under
// test-results/ (git-ignored) for a reviewer to look at.

const PASSWORD = process.env.REGOLOG_DEMO_PASSWORD || 'brightwater-demo';

async function signIn(page: Page, email: string) {
	await page.goto('/sign-in');
	await page.getByLabel('E-mail address').fill(email);
	await page.getByLabel('Password').fill(PASSWORD);
	await page.getByRole('button', { name: 'Sign in' }).click();
	await expect(page).not.toHaveURL(/\/sign-in/);
}

/** The labels of one axis of `chart` (ChartAxis's data-axis name), in the order drawn. */
async function axisLabels(chart: Locator, axis: string): Promise<string[]> {
	return (await chart.locator(`svg g[data-axis="${axis}"] text`).allTextContents()).map((t) => t.trim()).filter(Boolean);
}

/** The numbers of labels that end in `unit`. */
const numbers = (labels: string[], unit: RegExp) => labels.filter((t) => unit.test(t)).map((t) => Number(t.replace(unit, '').replace('−', '-')));

/** Evenly spaced labels whose step is round. */
function expectRoundSteps(values: number[]) {
	expect(values.length).toBeGreaterThanOrEqual(3);
	const steps = values.slice(1).map((v, i) => Number(Math.abs(v - values[i]).toPrecision(6)));
	expect(new Set(steps).size).toBe(1);
	expect(roundStep(steps[0])).toBe(true);
}

/** A step is round when it is 1, 2 or 5 × 10ⁿ (d3-scale's nice steps). */
function roundStep(step: number): boolean {
	const e = Math.floor(Math.log10(step) + 1e-9);
	const m = Number((step / 10 ** e).toPrecision(6));
	return [1, 2, 5, 10].includes(m);
}

async function noAxeViolations(page: Page, selector: string) {
	const result = await new AxeBuilder({ page }).include(selector).withTags(['wcag2a', 'wcag2aa', 'wcag21a', 'wcag21aa']).analyze();
	expect(result.violations.map((v) => `${v.id}: ${v.nodes.map((n) => n.target.join(' ')).join(', ')}`)).toEqual([]);
}

async function photograph(chart: Locator, info: TestInfo, name: string) {
	const path = info.outputPath(`${name}.png`);
	await chart.screenshot({ path });
	await info.attach(name, { path, contentType: 'image/png' });
}

test('the ledger chart of a parent specimen reads round masses on a UTC time axis, with a text alternative', async ({ page }, info) => {
	await signIn(page, 'curator@brightwater.example');
	await page.goto('/items?collection=TRN&kind=specimen');
	await page.getByRole('table').getByRole('link').first().click();
	const chart = page.getByTestId('ledger-chart');
	await expect(chart).toBeVisible();

	// the upper panel's mass axis: evenly spaced round numbers, labelled with the decimals the step needs
	const massLabels = await axisLabels(chart, 'mass');
	expectRoundSteps(numbers(massLabels, / (mg|g)$/));
	for (const l of massLabels) expect(l).toMatch(/^\d+(\.\d{1,3})? (µg|mg|g)$/);
	// the lower panel's log axis: one label a decade
	const change = await axisLabels(chart, 'change');
	expect(change.length).toBeGreaterThanOrEqual(2);
	for (const l of change) expect(l).toMatch(/^(0\.0*1|10*) (µg|mg|g|kg)$/);

	// entry numbers are the marks, and the time axis says it is UTC
	const rows = await page.getByTestId('ledger').locator('tbody tr').count();
	expect(rows).toBeGreaterThan(1);
	await expect(chart.getByText(/^Time \(UTC(, \d{1,2} [A-Z][a-z]{2} \d{4})?\)/)).toBeVisible();
	const img = page.getByRole('img', { name: /Recorded mass after each ledger entry/ });
	await expect(img).toHaveAccessibleDescription(new RegExp(`${rows} ledger entries`));
	await expect(page.getByTestId('ledger-summary')).toContainText('expanded uncertainty');
	await noAxeViolations(page, '[data-testid="ledger-chart"]');
	await photograph(chart, info, 'ledger');
});

test('the mass-share chart of each collection shows every part, enlarged beside a near-total one', async ({ page }, info) => {
	await signIn(page, 'curator@brightwater.example');
	await page.goto('/collections');
	const charts = page.getByTestId('mass-share-chart');
	const n = await charts.count();
	expect(n).toBeGreaterThan(0);
	for (let i = 0; i < n; i++) {
		const c = charts.nth(i);
		await expect(c.getByRole('img')).toHaveAccessibleName(/Where the registered mass of \w+ is now: .*%/);
		await expect(c.getByRole('listitem')).toHaveCount(6);
		const share = numbers(await axisLabels(c, 'share'), / %$/);
		expect([share[0], share[share.length - 1]]).toEqual([0, 100]);
		expectRoundSteps(share);
		const rest = await axisLabels(c, 'rest');
		if (rest.length) expectRoundSteps(numbers(rest, / (µg|mg|g)$/));
		await photograph(c, info, `mass-share-${i}`);
	}
	await noAxeViolations(page, '[data-testid="mass-share-chart"]');
});

test('the blank-control report draws its blanks, limits and ee with their values as text', async ({ page }, info) => {
	await signIn(page, 'analyst@fennick.example');
	await page.goto('/reports');
	await page.getByRole('link', { name: /Hot-water extract of a cell 1 aliquot/ }).first().click();
	await expect(page.getByTestId('report-title')).toBeVisible();

	const ee = page.getByTestId('ee-chart');
	await expect(ee).toBeVisible();
	const pcts = numbers(await axisLabels(ee, 'ee'), / %$/);
	expect(pcts).toContain(0);
	expectRoundSteps(pcts);
	// the table behind the chart has a row for each dot drawn
	const dots = await ee.locator('svg circle').count();
	await ee.getByText("The chart's values as a table").click();
	await expect(ee.getByTestId('ee-chart-table').locator('tbody tr')).toHaveCount(dots);
	await expect(ee.getByRole('img')).toHaveAccessibleDescription(/enantiomeric excess/);
	await photograph(ee, info, 'ee');

	const blanks = page.getByTestId('blank-chart');
	const n = await blanks.count();
	expect(n).toBeGreaterThan(0);
	for (let i = 0; i < n; i++) {
		const c = blanks.nth(i);
		await expect(c.getByRole('img')).toHaveAccessibleDescription(/blank mean .*\(.+\)\.$/);
		await photograph(c, info, `blank-${i}`);
	}
	// each chart's axis: round steps, or on a log axis whole decades only
	for (let i = 0; i < n; i++) {
		const c = blanks.nth(i);
		const values = (await axisLabels(c, 'signal')).map(Number).filter((v) => Number.isFinite(v));
		const log = (await c.locator('svg title').first().textContent())!.includes('logarithmic');
		if (log) for (const d of values) expect(Math.log10(d)).toBeCloseTo(Math.round(Math.log10(d)), 9);
		else expectRoundSteps(values);
	}
	await noAxeViolations(page, '[data-testid="blank-chart"]');
	await noAxeViolations(page, '[data-testid="ee-chart"]');
});
