import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { parse } from 'csv-parse/sync';
import { signedIn, DEMO, type Client } from '../helpers/http';
import { snapshot } from '../helpers/scratch-db';
import { db, closeDb } from '../../src/lib/server/db';
import { IMPORT_COLUMNS } from '../../src/lib/server/registry/import';

let curator: Client;
beforeAll(async () => {
	curator = await signedIn(DEMO.curator);
});
afterAll(() => closeDb());

const csv = (mode: 'preview' | 'commit', text: string) => curator.request('POST', `/api/items/import?mode=${mode}`, text, { 'content-type': 'text/csv' });
const header = 'collection,mass_mg,description,container,storage_place,balance,reason';
const unchanged = async (fn: () => Promise<void>) => {
	const before = await snapshot(db(), ['schema_migrations', 'sessions']);
	await fn();
	expect(await snapshot(db(), ['schema_migrations', 'sessions'])).toEqual(before);
};

describe('CSV import of parent specimens', () => {
	it('offers a template whose columns are the documented ones and whose rows preview clean', async () => {
		const r = await curator.get('/api/items/import/template');
		expect(r.status).toBe(200);
		expect(r.headers.get('content-type')).toContain('text/csv');
		const rows = parse(String(r.body), { columns: true }) as Record<string, string>[];
		expect(Object.keys(rows[0])).toEqual(IMPORT_COLUMNS.map((c) => c.name));
		await unchanged(async () => {
			const p = await csv('preview', String(r.body));
			expect(p.status).toBe(200);
			expect(p.body).toMatchObject({ total: 2, valid: 2 });
		});
	});

	it('previews per-row errors naming line and column, and a commit with any bad row imports nothing', async () => {
		const text = [
			header,
			'HLF,12.500,good fragment,jar,C-4,,',
			'HLF,-3,negative,jar,C-4,,',
			'ZZZ,1.000,unknown collection,jar,C-4,,',
			'HLF,1.0005,finer than a microgram,jar,C-4,,',
			'HLF,abc,not a number,jar,C-4,,',
			'HLF,2.000,,jar,C-4,,',
			'ICE,0.100,below minimum weight,holder,rack V,Tamberlow UM-1 ultramicro,',
			'HLF,5.000,unknown balance,jar,C-4,Nonesuch balance,'
		].join('\n');
		await unchanged(async () => {
			const p = await csv('preview', text);
			expect(p.status).toBe(200);
			expect(p.body.total).toBe(8);
			expect(p.body.valid).toBe(1);
			const byLine = Object.fromEntries(p.body.rows.map((r: { line: number; errors: Record<string, string> }) => [r.line, r.errors]));
			expect(byLine[2]).toEqual({});
			expect(byLine[3].mass_mg).toMatch(/negative/);
			expect(byLine[4].collection).toMatch(/no collection ZZZ/);
			expect(byLine[5].mass_mg).toMatch(/more decimals than a microgram/);
			expect(byLine[6].mass_mg).toMatch(/not a mass in mg/);
			expect(byLine[7].description).toMatch(/required/);
			expect(byLine[8].reason).toMatch(/below the minimum weight/);
			expect(byLine[9].balance).toMatch(/no balance is named/);
			const c = await csv('commit', text);
			expect(c.status).toBe(422);
			expect(c.body.error.code).toBe('invalid_rows');
			expect(c.body.error.rows.map((r: { line: number }) => r.line)).toEqual([3, 4, 5, 6, 7, 8, 9]);
		});
	});

	it('refuses unreadable files, unknown or missing columns and other content types, changing nothing', async () => {
		const lab = await signedIn(DEMO.fennick);
		await unchanged(async () => {
			expect((await csv('preview', 'collection,mass_mg,description\n"HLF,1.0,unclosed')).body.error.code).toBe('invalid_csv');
			const cols = await csv('preview', 'collection,mass,description,colour\nHLF,1,x,red');
			expect(cols.status).toBe(422);
			expect(cols.body.error.message).toMatch(/missing column mass_mg; unknown columns mass, colour/);
			expect((await csv('preview', header + '\n')).body.error.code).toBe('empty_file');
			expect((await curator.request('POST', '/api/items/import?mode=preview', '{}', { 'content-type': 'application/json' })).status).toBe(415);
			expect((await curator.request('POST', '/api/items/import?mode=later', header, { 'content-type': 'text/csv' })).status).toBe(400);
			expect((await lab.request('POST', '/api/items/import?mode=commit', header + '\nHLF,1.000,x,,,,', { 'content-type': 'text/csv' })).status).toBe(403);
		});
	});

	it('commits all rows in one go, streaming progress, each with its ledger entry', async () => {
		const rows = Array.from({ length: 120 }, (_, i) => `HLF,${(1 + i / 1000).toFixed(3)},imported fragment ${i + 1},jar,C-${i % 9},,`);
		const c = await csv('commit', [header, ...rows].join('\n'));
		expect(c.status).toBe(200);
		expect(c.headers.get('content-type')).toContain('application/x-ndjson');
		const lines = String(c.body).trim().split('\n').map((l) => JSON.parse(l));
		const progress = lines.filter((l) => l.progress !== undefined).map((l) => l.progress);
		expect(progress.length).toBeGreaterThan(5);
		expect(progress).toEqual([...progress].sort((a, b) => a - b));
		expect(progress.at(-1)).toBe(120);
		const done = lines.at(-1);
		expect(done).toMatchObject({ done: true, imported: 120 });
		const last = await curator.get(`/api/items/${done.codes[119]}`);
		expect(last.body.item).toMatchObject({ massUg: 1_119, description: 'imported fragment 120', storagePlace: 'C-2', kind: 'specimen' });
		const ledger = await curator.get(`/api/items/${done.codes[0]}/ledger`);
		expect(ledger.body.entries).toEqual([expect.objectContaining({ kind: 'registered', deltaUg: 1_000 })]);
	});
});
