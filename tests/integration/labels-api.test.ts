// The label routes' checks that come before any registry lookup: sign-in, code check characters,
// print options and batch limits. Every failure has the documented JSON error shape.
import { describe, it, expect, beforeAll } from 'vitest';
import { client, signedIn, DEMO, type Client } from '../helpers/http';
import { formatCode, itemPath, legacyCode } from '../../src/lib/domain/codes';

const good = formatCode('TRN', 42); // TRN-00042/G
const wrong = 'TRN-00042/H';

let curator: Client;
beforeAll(async () => {
	curator = await signedIn(DEMO.curator);
});

describe('GET /api/items/{code}/label', () => {
	it('needs an account', async () => {
		const r = await client().get(`/api/items/${good}/label`);
		expect(r.status).toBe(401);
		expect(r.body.error.code).toBe('unauthenticated');
	});

	it('refuses a wrong check character (ISO/IEC 7064:2003 MOD 37,36) with a clear message', async () => {
		for (const path of [itemPath(wrong), wrong, legacyCode(wrong)]) {
			const r = await curator.get(`/api/items/${path}/label?format=thermal`);
			expect(r.status, path).toBe(400);
			expect(r.body.error.code).toBe('wrong_check_character');
			expect(r.body.error.message).toContain('check character is H, expected G');
		}
	});

	it('refuses text that is not an item code', async () => {
		const r = await curator.get('/api/items/TRN-42/label');
		expect(r.status).toBe(400);
		expect(r.body.error.code).toBe('invalid_code');
		expect(r.body.error.message).toContain('PREFIX-NNNNN/C');
	});

	it('refuses an unknown format, an offset beyond ±10 mm and a start position off the sheet', async () => {
		const f = await curator.get(`/api/items/${good}/label?format=a5`);
		expect(f.status).toBe(400);
		expect(f.body.error.message).toMatch(/format must be one of thermal, a4, letter/);
		const o = await curator.get(`/api/items/${good}/label?format=a4&offsetX=12`);
		expect(o.status).toBe(400);
		expect(o.body.error.message).toMatch(/offsetX must be between/);
		const n = await curator.get(`/api/items/${good}/label?format=a4&offsetY=abc`);
		expect(n.status).toBe(400);
		const s = await curator.get(`/api/items/${good}/label?format=letter&startAt=28`);
		expect(s.status).toBe(400);
		expect(s.body.error.message).toMatch(/1 to 27/);
	});
});

describe('POST /api/labels', () => {
	it('needs an account', async () => {
		const r = await client().post('/api/labels', { codes: [good], format: 'a4' });
		expect(r.status).toBe(401);
	});

	it('names every code with a wrong check character, by its position', async () => {
		const r = await curator.post('/api/labels', { codes: [good, wrong, 'HLF-00001/0'], format: 'a4' });
		expect(r.status).toBe(400);
		expect(r.body.error.code).toBe('wrong_check_character');
		expect(Object.keys(r.body.error.fields)).toEqual(['codes.1', 'codes.2']);
		expect(r.body.error.fields['codes.1']).toContain('expected G');
		expect(r.body.error.message).toMatch(/^2 codes are not valid/);
	});

	it('refuses an empty list and more than 1000 codes', async () => {
		const empty = await curator.post('/api/labels', { codes: [], format: 'a4' });
		expect(empty.status).toBe(422);
		expect(empty.body.error.fields.codes).toMatch(/at least one/);
		const many = await curator.post('/api/labels', { codes: Array.from({ length: 1001 }, (_, i) => formatCode('TRN', i + 1)), format: 'a4' });
		expect(many.status).toBe(422);
		expect(many.body.error.fields.codes).toMatch(/at most 1000/);
	});
});

describe('GET /api/scan/{code}', () => {
	it('refuses a wrong check character before looking anything up', async () => {
		const r = await curator.get(`/api/scan/${itemPath(wrong)}`);
		expect(r.status).toBe(400);
		expect(r.body.error.code).toBe('wrong_check_character');
	});

	it('needs an account', async () => {
		expect((await client().get(`/api/scan/${good}`)).status).toBe(401);
	});
});
