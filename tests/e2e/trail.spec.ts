import { test, expect, type Page } from '@playwright/test';
import AxeBuilder from '@axe-core/playwright';
import { readFileSync, writeFileSync } from 'node:fs';

const PASSWORD = process.env.REGOLOG_DEMO_PASSWORD || 'brightwater-demo';

async function signIn(page: Page, email: string) {
	const r = await page.request.post('/api/auth/sign-in', { data: { email, password: PASSWORD } });
	expect(r.status()).toBe(200);
}

async function seriousFindings(page: Page) {
	const result = await new AxeBuilder({ page }).withTags(['wcag2a', 'wcag2aa', 'wcag21a', 'wcag21aa']).analyze();
	return result.violations.filter((v) => v.impact === 'serious' || v.impact === 'critical').map((v) => `${v.id}: ${v.help} — ${v.nodes.map((n) => n.target.join(' ')).slice(0, 3).join(', ')}`);
}

test('an auditor checks the trail from its last checkpoint, exports a bundle and verifies it offline with nothing sent anywhere', async ({ page, browser }, info) => {
	test.setTimeout(120_000);
	await signIn(page, 'auditor@brightwater.example');
	await page.goto('/audit/trail');
	await expect(page.getByRole('heading', { name: 'The trail' })).toBeVisible();
	await expect(page.getByTestId('signature-status')).toContainText('verifies (Ed25519)');
	await expect(page.getByTestId('events-after')).toContainText(/\d+ events? \(head: event \d+/);
	expect(await seriousFindings(page)).toEqual([]);

	await page.getByRole('button', { name: 'Verify since the last checkpoint' }).click();
	await expect(page.getByTestId('verify-result')).toContainText(/Intact\. The checkpoint at event [\d,]+ verifies, and (all [\d,]+ events after it link up|the one event after it links up)/);
	await page.getByRole('button', { name: 'Verify the whole trail' }).click();
	await expect(page.getByTestId('verify-result')).toContainText(/Intact\. All [\d,]+ events link up and match their hashes, and the chain leads to (all \d+ signed checkpoints|the signed checkpoint)/);

	await page.getByRole('button', { name: 'Export bundle' }).click();
	await expect(page.getByTestId('trail-progress')).toContainText('100 %');
	const download = page.waitForEvent('download');
	await page.getByTestId('bundle-link').click();
	const bundle = info.outputPath('bundle.ndjson');
	await (await download).saveAs(bundle);
	await page.screenshot({ path: info.outputPath('trail-page.png'), fullPage: true });

	// the offline verifier, in a browser that is not signed in and then cut off from the network
	const context = await browser.newContext();
	const offline = await context.newPage();
	await offline.goto('/audit/trail/offline');
	await expect(offline.getByRole('heading', { name: 'Verify a trail bundle offline' })).toBeVisible();
	expect(await seriousFindings(offline)).toEqual([]);
	const requests: string[] = [];
	offline.on('request', (r) => requests.push(r.url()));
	await context.setOffline(true);

	await offline.getByLabel('choose a file').setInputFiles(bundle);
	await expect(offline.getByTestId('offline-result')).toContainText('✓ Intact');
	await expect(offline.getByTestId('offline-result')).toContainText(/checkpoints carry a valid signature/);
	await offline.screenshot({ path: info.outputPath('offline-intact.png'), fullPage: true });

	// one event changed in the bundle: the browser names it
	const lines = readFileSync(bundle, 'utf8').split('\n');
	const k = lines.findIndex((l) => l.startsWith('{"seq":3,'));
	lines[k] = lines[k].replace('"action":"', '"action":"x');
	const tampered = info.outputPath('tampered.ndjson');
	writeFileSync(tampered, lines.join('\n'));
	await offline.getByLabel('choose a file').setInputFiles(tampered);
	await expect(offline.getByTestId('offline-result')).toContainText('✗ Broken at event 3');
	await expect(offline.getByTestId('offline-result')).toContainText('content does not match its hash');
	await offline.screenshot({ path: info.outputPath('offline-broken.png'), fullPage: true });

	expect(requests).toEqual([]);
	await context.close();
});
