// Label routes against the registry's items (migration 0010). Becomes labels-registry.test.ts
// once the registry tables are on this branch; until then vitest does not collect it.
import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { QueryTypes } from 'sequelize';
import { signedIn, DEMO, BASE, type Client } from '../helpers/http';
import { db, closeDb } from '../../src/lib/server/db';
import { formatCode, itemPath } from '../../src/lib/domain/codes';
import { rasterise, decodePage, decodeAt, pdfinfo } from '../helpers/pdf';

let curator: Client;
let fennick: Client;
let facilityCode: string;
let fennickCode: string | null;
let otherLabCode: string | null;
const unknown = formatCode('TRN', 99999);

async function pdf(c: Client, method: 'GET' | 'POST', path: string, body?: unknown) {
	const res = await fetch(BASE + path, {
		method,
		headers: { cookie: c.cookie!, origin: BASE, ...(body ? { 'content-type': 'application/json' } : {}) },
		body: body ? JSON.stringify(body) : undefined
	});
	return { status: res.status, type: res.headers.get('content-type'), bytes: Buffer.from(await res.arrayBuffer()) };
}

beforeAll(async () => {
	curator = await signedIn(DEMO.curator);
	fennick = await signedIn(DEMO.fennick);
	const rows = await db().query<{ code: string; lab: string | null }>(
		`SELECT i.code, l.name AS lab FROM items i LEFT JOIN labs l ON l.id = i.holder_lab_id ORDER BY i.code`,
		{ type: QueryTypes.SELECT }
	);
	facilityCode = rows.find((r) => r.lab === null)!.code;
	fennickCode = rows.find((r) => r.lab === 'Fennick Organics Lab')?.code ?? null;
	otherLabCode = rows.find((r) => r.lab !== null && r.lab !== 'Fennick Organics Lab')?.code ?? null;
});
afterAll(closeDb);

describe('label of one item', () => {
	it('answers a thermal PDF whose QR (read by jsQR, ISO/IEC 18004) is the item URL', async () => {
		const r = await pdf(curator, 'GET', `/api/items/${facilityCode}/label?format=thermal`);
		expect(r.status).toBe(200);
		expect(r.type).toBe('application/pdf');
		const info = pdfinfo(r.bytes);
		expect([info.width, info.height]).toEqual([144, 72]); // ISO 32000-1: 50.8 × 25.4 mm at 1/72 in
		expect(decodePage(rasterise(r.bytes, 1, 600))?.data).toBe(`${BASE}/items/${itemPath(facilityCode)}`);
	});

	it('answers 404 for an unknown code', async () => {
		const r = await curator.get(`/api/items/${unknown}/label`);
		expect(r.status).toBe(404);
		expect(r.body.error.code).toBe('not_found');
	});

	it('answers 404 to a lab member for an item their lab does not hold', async () => {
		expect((await fennick.get(`/api/items/${facilityCode}/label`)).status).toBe(404);
		if (otherLabCode) expect((await fennick.get(`/api/items/${otherLabCode}/label`)).status).toBe(404);
		if (fennickCode) expect((await pdf(fennick, 'GET', `/api/items/${fennickCode}/label`)).status).toBe(200);
	});
});

describe('batch labels', () => {
	it('prints the codes in the order given on A4 sheets', async () => {
		const rows = await db().query<{ code: string }>(`SELECT code FROM items WHERE holder_lab_id IS NULL ORDER BY code LIMIT 4`, { type: QueryTypes.SELECT });
		const codes = rows.map((r) => r.code).reverse();
		const r = await pdf(curator, 'POST', '/api/labels', { codes, format: 'a4' });
		expect(r.status).toBe(200);
		const img = rasterise(r.bytes, 1, 300);
		// A4 grid: 3 columns at 21.6 + 58·c mm, rows at 14.3 + 27·r mm
		expect(decodeAt(img, 21.6, 14.3, 50.8, 25.4)?.data).toBe(`${BASE}/items/${itemPath(codes[0])}`);
		expect(decodeAt(img, 21.6, 14.3 + 27, 50.8, 25.4)?.data).toBe(`${BASE}/items/${itemPath(codes[3])}`);
	});

	it('answers 404 naming the codes that are unknown or out of sight, and prints nothing', async () => {
		const r = await curator.post('/api/labels', { codes: [facilityCode, unknown], format: 'a4' });
		expect(r.status).toBe(404);
		expect(r.body.error.missing).toEqual([unknown]);
	});
});

describe('scan check', () => {
	it('finds a visible item and refuses an unknown one', async () => {
		expect((await curator.get(`/api/scan/${facilityCode}`)).body).toEqual({ code: facilityCode, href: `/items/${itemPath(facilityCode)}` });
		expect((await curator.get(`/api/scan/${unknown}`)).status).toBe(404);
		expect((await fennick.get(`/api/scan/${facilityCode}`)).status).toBe(404);
	});
});
