// Item codes carry a slash before their check character. Every route that takes a code answers for
// it written three ways: percent-encoded as Regolog's links and QR codes write it (TRN-00001%2FY),
// with the slash left as it is (src/hooks.ts routes it), and in the older form with a hyphen; and
// what Regolog hands out (scan answers, Location headers, label file names) is written so that it
// works in a URL. Codes are read from the API, not typed in.
import { describe, it, expect, beforeAll } from 'vitest';
import { signedIn, DEMO, type Client } from '../helpers/http';
import { itemHref, itemPath, legacyCode, parseCode } from '../../src/lib/domain/codes';

let curator: Client;
let code: string;
let forms: string[];
beforeAll(async () => {
	curator = await signedIn(DEMO.curator);
	const list = await curator.get('/api/items?collection=TRN&sort=code&limit=1');
	code = list.body.items[0].code;
	forms = [itemPath(code), code, legacyCode(code)];
});

describe('a code in a route', () => {
	it('is written PREFIX-NNNNN/C by the API', () => {
		expect(code).toMatch(/^TRN-\d{5}\/[0-9A-Z]$/);
		expect(parseCode(code)).toMatchObject({ ok: true, code });
	});

	it('reaches the item, its lineage, ledger, exposure and label in every form', async () => {
		for (const path of forms) {
			const item = await curator.get(`/api/items/${path}`);
			expect(item.status, path).toBe(200);
			expect(item.body.item.code).toBe(code);
			const lineage = await curator.get(`/api/items/${path}/lineage?depth=1`);
			expect(lineage.status, path).toBe(200);
			expect((await curator.get(`/api/items/${path}/ledger`)).status, path).toBe(200);
			expect((await curator.get(`/api/items/${path}/exposure`)).status, path).toBe(200);
			const label = await curator.get(`/api/items/${path}/label?format=thermal`);
			expect(label.status, path).toBe(200);
			expect(label.headers.get('content-type')).toBe('application/pdf');
			// no slash in the file name
			expect(label.headers.get('content-disposition')).toBe(`inline; filename="${code.replace('/', '_')}-label.pdf"`);
		}
	});

	it('opens the item page, its split page and its audit trace in every form', async () => {
		for (const path of forms) {
			for (const page of [`/items/${path}`, `/items/${path}/split`, `/audit/items/${path}`]) {
				const r = await curator.get(page);
				expect(r.status, page).toBe(200);
				expect(String(r.body)).toContain(code);
			}
		}
	});

	it('is answered by the scan route with a link that percent-encodes the slash', async () => {
		for (const path of forms) {
			const r = await curator.get(`/api/scan/${path}`);
			expect(r.status, path).toBe(200);
			expect(r.body).toEqual({ code, href: itemHref(code) });
		}
		expect(itemHref(code)).toContain('%2F');
	});

	it('comes back percent-encoded in the Location of a new specimen', async () => {
		const r = await curator.post('/api/items', { collection: 'HLF', massUg: 5_000, description: 'code route check' });
		expect(r.status).toBe(201);
		expect(r.headers.get('location')).toBe(`/api/items/${itemPath(r.body.item.code)}`);
		expect((await curator.get(r.headers.get('location')!)).status).toBe(200);
	});

	it('refuses a wrong check character in every form', async () => {
		const wrong = code.slice(0, -1) + (code.endsWith('0') ? '1' : '0');
		for (const path of [itemPath(wrong), wrong, legacyCode(wrong)]) {
			const r = await curator.get(`/api/items/${path}`);
			expect(r.status, path).toBe(400);
			expect(r.body.error.code).toBe('wrong_check_character');
		}
	});

	it('finds the trail events of an item by its code in either form', async () => {
		const auditor = await signedIn(DEMO.auditor);
		const first = await auditor.get('/api/trail/events?subjectType=item&action=item.custody_changed&limit=1');
		expect(first.status).toBe(200);
		const subject = first.body.events[0].subject.id as string;
		expect(parseCode(subject)).toMatchObject({ ok: true, code: subject });
		const byCode = await auditor.get(`/api/trail/events?subjectType=item&subjectId=${encodeURIComponent(subject)}`);
		const byOld = await auditor.get(`/api/trail/events?subjectType=item&subjectId=${encodeURIComponent(legacyCode(subject))}`);
		expect(byCode.body.events.length).toBeGreaterThan(0);
		expect(byOld.body.events.map((e: { seq: number }) => e.seq)).toEqual(byCode.body.events.map((e: { seq: number }) => e.seq));
	});
});
