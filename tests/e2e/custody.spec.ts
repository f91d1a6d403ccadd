import { test, expect, type Browser, type Page } from '@playwright/test';
import { readFileSync } from 'node:fs';

const PASSWORD = process.env.REGOLOG_DEMO_PASSWORD || 'brightwater-demo';

async function signIn(browser: Browser, email: string): Promise<Page> {
	const context = await browser.newContext();
	const page = await context.newPage();
	await page.goto('/sign-in');
	await page.getByLabel('E-mail address').fill(email);
	await page.getByLabel('Password').fill(PASSWORD);
	await page.getByRole('button', { name: 'Sign in' }).click();
	await expect(page).toHaveURL(/\/$/);
	return page;
}

test('a lab asks, the curator grants, splits and ships, the lab signs and reports, the auditor follows it all', async ({ browser }) => {
	test.setTimeout(120_000);
	const lab = await signIn(browser, 'analyst@fennick.example');
	const curator = await signIn(browser, 'curator@brightwater.example');

	// The lab asks for 0.800 mg of the meteorite.
	await lab.getByRole('navigation', { name: 'Main' }).getByRole('link', { name: 'Requests' }).click();
	await lab.getByRole('link', { name: 'New request' }).click();
	await lab.getByLabel('Collection').selectOption('HLF');
	await lab.getByLabel('Mass asked for (mg)').fill('0.800');
	await lab.getByLabel('Analysis plan').fill('Hot-water extraction, derivatisation and chiral GC-MS with two procedural blanks.');
	await lab.getByLabel('Scientific justification').fill('To compare matrix amino acids with the cell 1 fines of the returned sample.');
	await lab.getByRole('button', { name: 'Submit for review' }).click();
	await expect(lab).toHaveURL(/\/requests\/[0-9a-f-]{36}$/);
	await expect(lab.getByTestId('request-state')).toHaveText('Submitted');
	const requestUrl = new URL(lab.url()).pathname;
	const number = (await lab.getByRole('heading', { level: 1 }).textContent())!.trim();

	// The curator sees it on the worklist, grants it, splits an aliquot and sets it aside.
	await curator.reload();
	await expect(curator.getByTestId('work-review')).toBeVisible();
	await curator.getByRole('navigation', { name: 'Main' }).getByRole('link', { name: 'Requests' }).click();
	await curator.getByLabel('Search').fill(number);
	await curator.getByRole('link', { name: number, exact: true }).click();
	await curator.getByLabel('Mass to grant (mg)').fill('0.800');
	await curator.getByRole('button', { name: 'Grant' }).click();
	await expect(curator.getByTestId('request-state')).toHaveText('Granted');
	const items = await (await curator.request.get('/api/items?collection=HLF&state=stored&holder=facility&kind=specimen')).json();
	const parent = items.items.sort((a: { massUg: number }, b: { massUg: number }) => b.massUg - a.massUg)[0].code;
	const split = await curator.request.post(`/api/items/${parent}/splits`, { data: { children: [{ massUg: 800 }] }, headers: { origin: new URL(curator.url()).origin } });
	expect(split.status()).toBe(201);
	const aliquot = (await split.json()).children[0].code as string;
	await curator.getByLabel('Aliquot code').fill(aliquot);
	await curator.getByRole('button', { name: 'Set aside' }).click();
	await expect(curator.getByRole('link', { name: aliquot })).toBeVisible();

	// Packing with dry ice shows the caution; dispatch is signed with the password.
	await curator.getByRole('link', { name: 'Prepare transfer' }).click();
	await curator.getByLabel('Container').fill('Crimp-sealed PTFE vial in a steel can');
	await curator.getByLabel('Coolant').selectOption('dry_ice');
	await expect(curator.getByRole('note')).toContainText("carrier's dangerous-goods rules");
	await curator.getByLabel('Dry ice, net mass (kg)').fill('2.5');
	await curator.getByLabel('Carrier').fill('Corvane Courier');
	await curator.getByRole('button', { name: 'Prepare transfer' }).click();
	await expect(curator).toHaveURL(/\/transfers\/[0-9a-f-]{36}$/);
	const transferUrl = new URL(curator.url()).pathname;
	await curator.getByLabel(/Dispatched/).check();
	await curator.getByLabel('Your password').fill('wrong password here');
	await curator.getByRole('button', { name: 'Sign with my password' }).click();
	await expect(curator.getByRole('alert').first()).toContainText('not your password');
	await curator.getByLabel(/Dispatched/).check();
	await curator.getByLabel('Your password').fill(PASSWORD);
	await curator.getByRole('button', { name: 'Sign with my password' }).click();
	await expect(curator.getByTestId('signature')).toHaveCount(1);

	// The lab signs receipt and reports usage.
	await lab.goto(transferUrl);
	await lab.getByLabel('Received intact').check();
	await lab.getByLabel('Your password').fill(PASSWORD);
	await lab.getByRole('button', { name: 'Sign with my password' }).click();
	await expect(lab.getByTestId('signature')).toHaveCount(2);
	await expect(lab.getByText('✓ matches the manifest')).toHaveCount(2);
	await lab.goto(requestUrl);
	await lab.getByLabel('Consumed (mg)').fill('0.600');
	await lab.getByLabel('Returned (mg)').fill('0.200');
	await lab.getByLabel('Results summary').fill('Alanine and isovaline measured in triplicate; blanks below LOD.');
	await lab.getByRole('button', { name: 'Submit usage report' }).click();
	await expect(lab.getByText('within U')).toBeVisible();

	// The auditor sees each step on the trail and downloads the receipt.
	const auditor = await signIn(browser, 'auditor@brightwater.example');
	const tid = transferUrl.split('/').pop();
	const events = await (await auditor.request.get(`/api/trail/events?subjectType=transfer&subjectId=${tid}`)).json();
	expect(events.events.map((e: { action: string }) => e.action)).toEqual(['transfer.prepared', 'transfer.signed.dispatched', 'transfer.signed.received_intact']);
	const rid = requestUrl.split('/').pop();
	const reqEvents = await (await auditor.request.get(`/api/trail/events?subjectType=allocation_request&subjectId=${rid}`)).json();
	expect(reqEvents.events.map((e: { action: string }) => e.action)).toEqual(['request.submitted', 'request.granted']);
	const itemEvents = await (await auditor.request.get(`/api/trail/events?subjectType=item&subjectId=${aliquot}`)).json();
	expect(itemEvents.events.map((e: { action: string }) => e.action)).toEqual(expect.arrayContaining(['item.earmarked', 'item.custody_changed', 'usage.reported']));
	await auditor.goto(transferUrl);
	const [download] = await Promise.all([auditor.waitForEvent('download'), auditor.getByRole('link', { name: /custody receipt/ }).click()]);
	const file = await download.path();
	expect(readFileSync(file!).subarray(0, 5).toString()).toBe('%PDF-');
});
