import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { signedIn, DEMO, type Client } from '../helpers/http';
import { snapshot } from '../helpers/scratch-db';
import { newSpecimen, balanceByReadability, mistype } from '../helpers/registry';
import { db, closeDb } from '../../src/lib/server/db';
import { formatCode } from '../../src/lib/domain/codes';

let curator: Client;
let admin: Client;
let parent: string;
let balanceId: string;

beforeAll(async () => {
	curator = await signedIn(DEMO.curator);
	admin = await signedIn(DEMO.admin);
	parent = await newSpecimen(curator, 10_000);
	balanceId = (await balanceByReadability(curator, 1)).id;
});
afterAll(() => closeDb());

/** Every bad value a mass field can receive, with what the answer must say. */
const BAD_MASSES: [string, unknown, RegExp][] = [
	['negative', -5, /negative/],
	['zero', 0, /more than zero/],
	['fractional', 12.5, /whole number/],
	['1e30', 1e30, /too large/],
	['beyond exact integers', 2 ** 53 + 2, /too large/],
	['a string', '1000', /JSON number.*text/],
	['an array', [1000], /JSON number.*list/],
	['null', null, /JSON number.*null/],
	['a boolean', true, /JSON number/],
	['an object', { mg: 1 }, /JSON number/]
];

async function expectUnchanged(fn: () => Promise<void>) {
	const before = await snapshot(db(), ['schema_migrations', 'sessions']);
	await fn();
	expect(await snapshot(db(), ['schema_migrations', 'sessions'])).toEqual(before);
}

function expectProblem(r: { status: number; body: any }, status: number, field?: string, message?: RegExp) {
	expect(r.status, JSON.stringify(r.body)).toBe(status);
	expect(typeof r.body.error.code).toBe('string');
	expect(r.body.error.message.length).toBeGreaterThan(10);
	if (field) expect(Object.keys(r.body.error.fields ?? {})).toContain(field);
	if (message) expect(field ? r.body.error.fields[field] : r.body.error.message).toMatch(message);
}

describe('bad input changes nothing', () => {
	it('POST /api/items refuses every bad mass, missing fields and unknown collections', async () => {
		await expectUnchanged(async () => {
			for (const [, massUg, why] of BAD_MASSES) {
				expectProblem(await curator.post('/api/items', { collection: 'HLF', massUg, description: 'x' }), 422, 'massUg', why);
			}
			expectProblem(await curator.post('/api/items', { collection: 'HLF', description: 'no mass' }), 422, 'massUg', /required/);
			expectProblem(await curator.post('/api/items', { massUg: 1000, description: 'no collection' }), 422, 'collection');
			expectProblem(await curator.post('/api/items', { collection: 'HLF', massUg: 1000 }), 422, 'description');
			expectProblem(await curator.post('/api/items', { collection: 'HLF', massUg: 1000, description: '' }), 422, 'description', /required/);
			expectProblem(await curator.post('/api/items', { collection: 'ZZZ', massUg: 1000, description: 'x' }), 422, 'collection', /no such collection/);
			expectProblem(await curator.post('/api/items', { collection: 'H1', massUg: 1000, description: 'x' }), 422, 'collection');
			expectProblem(await curator.post('/api/items', { collection: 'HLF', massUg: 1000, description: 'x', massMg: 1 }), 422);
			expectProblem(await curator.post('/api/items', { collection: 'HLF', massUg: 1000, description: 'x', weighing: { balanceId: 'nope' } }), 422, 'weighing.balanceId');
			expectProblem(await curator.post('/api/items', [{ collection: 'HLF', massUg: 1000, description: 'x' }]), 422);
			expectProblem(await curator.post('/api/items', '{"collection":"HLF","massUg":NaN,"description":"x"}'), 400);
			expectProblem(await curator.request('POST', '/api/items', 'collection=HLF', { 'content-type': 'application/x-www-form-urlencoded' }), 415);
		});
	});

	it('POST /api/items/{code}/splits refuses every bad child mass, shape, code and budget', async () => {
		await expectUnchanged(async () => {
			const url = `/api/items/${parent}/splits`;
			for (const [, massUg, why] of BAD_MASSES) {
				expectProblem(await curator.post(url, { children: [{ massUg: 1000 }, { massUg }] }), 422, 'children.1.massUg', why);
				expectProblem(await curator.post(url, { children: [{ massUg: 1000 }], parentAfterUg: massUg === 0 ? -1 : massUg, balanceId }), 422, 'parentAfterUg');
			}
			expectProblem(await curator.post(url, {}), 422, 'children');
			expectProblem(await curator.post(url, { children: [] }), 422, 'children', /at least one child/);
			expectProblem(await curator.post(url, { children: 'two' }), 422, 'children');
			expectProblem(await curator.post(url, { children: [1000, 2000] }), 422, 'children.0');
			expectProblem(await curator.post(url, { children: [{}] }), 422, 'children.0.massUg', /required/);
			expectProblem(await curator.post(url, { children: [{ massUg: 1000, mass: 3 }] }), 422);
			expectProblem(await curator.post(url, { children: [{ massUg: 1000 }], parentAfterUg: 8000 }), 422, 'balanceId');
			expectProblem(await curator.post(url, { children: [{ massUg: 1000 }], balanceId: 'not-a-balance' }), 422, 'balanceId');
			expectProblem(await curator.post(url, { children: [{ massUg: 1000 }], balanceId: '00000000-0000-4000-8000-000000000000' }), 422, 'balanceId');
			expectProblem(await curator.post(url, { children: Array.from({ length: 201 }, () => ({ massUg: 1 })) }), 422, 'children');
			const over = await curator.post(url, { children: [{ massUg: 6_000 }, { massUg: 4_001 }] });
			expectProblem(over, 409);
			expect(over.body.error.availableUg).toBe(10_000);
			expectProblem(await curator.post(`/api/items/${mistype(parent)}/splits`, { children: [{ massUg: 1 }] }), 400, 'code', /check character/);
			expectProblem(await curator.post(`/api/items/${formatCode('HLF', 99_990)}/splits`, { children: [{ massUg: 1 }] }), 404);
			expectProblem(await curator.post('/api/items/HLF-12/splits', { children: [{ massUg: 1 }] }), 400, 'code', /PREFIX-NNNNN\/C/);
		});
	});

	it('GET routes refuse bad queries and codes with a clear message', async () => {
		await expectUnchanged(async () => {
			expectProblem(await curator.get('/api/items?state=melted'), 400, 'state');
			expectProblem(await curator.get('/api/items?kind=rock'), 400, 'kind');
			expectProblem(await curator.get('/api/items?holder=someone'), 400, 'holder');
			expectProblem(await curator.get('/api/items?limit=0'), 400, 'limit');
			expectProblem(await curator.get('/api/items?limit=abc'), 400, 'limit');
			expectProblem(await curator.get('/api/items?limit=1.5'), 400, 'limit');
			expectProblem(await curator.get('/api/items?after=garbage'), 400, 'after');
			expectProblem(await curator.get('/api/items?sort=colour'), 400, 'sort');
			expectProblem(await curator.get('/api/items?colour=red'), 400);
			expectProblem(await curator.get('/api/items/export?state=melted'), 400, 'state');
			expectProblem(await curator.get(`/api/items/${parent}/lineage?depth=-1`), 400, 'depth');
			expectProblem(await curator.get(`/api/items/${parent}/lineage?depth=NaN`), 400, 'depth');
			for (const path of ['', '/lineage', '/ledger']) {
				expectProblem(await curator.get(`/api/items/${mistype(parent)}${path}`), 400, 'code');
				expectProblem(await curator.get(`/api/items/not-a-code${path}`), 400, 'code');
				expectProblem(await curator.get(`/api/items/${formatCode('TRN', 99_991)}${path}`), 404);
			}
		});
	});

	it('balance and collection-rule edits refuse bad values', async () => {
		const list = await admin.get('/api/balances');
		const id = list.body.balances[0].id;
		await expectUnchanged(async () => {
			const good = { name: 'Bad-input balance', readabilityUg: 1, repeatabilityUg: 0.5, calibrationDue: '2031-01-01' };
			expectProblem(await admin.post('/api/balances', { ...good, readabilityUg: 0 }), 422, 'readabilityUg');
			expectProblem(await admin.post('/api/balances', { ...good, readabilityUg: -1 }), 422, 'readabilityUg');
			expectProblem(await admin.post('/api/balances', { ...good, readabilityUg: '1' }), 422, 'readabilityUg');
			expectProblem(await admin.post('/api/balances', { ...good, repeatabilityUg: -0.1 }), 422, 'repeatabilityUg');
			expectProblem(await admin.post('/api/balances', { ...good, calibrationDue: '2031-02-30' }), 422, 'calibrationDue');
			expectProblem(await admin.post('/api/balances', { ...good, calibrationDue: 'soon' }), 422, 'calibrationDue');
			expectProblem(await admin.post('/api/balances', { ...good, name: list.body.balances[0].name }), 409, 'name');
			expectProblem(await admin.request('PATCH', `/api/balances/${id}`, { readabilityUg: 1e30 }), 422, 'readabilityUg');
			expectProblem(await admin.request('PATCH', '/api/balances/unknown', { readabilityUg: 1 }), 404);
			expectProblem(await curator.post('/api/balances', good), 403);
			expectProblem(await admin.request('PATCH', '/api/collections/TRN', { reserveFraction: 1.5 }), 422, 'reserveFraction');
			expectProblem(await admin.request('PATCH', '/api/collections/TRN', { lossToleranceUg: 5, lossToleranceFraction: 0.1 }), 422, 'lossToleranceUg');
			expectProblem(await admin.request('PATCH', '/api/collections/TRN', { maxAirExposureMin: -3 }), 422, 'maxAirExposureMin');
			expectProblem(await admin.request('PATCH', '/api/collections/ZZZ', { reserveFraction: 0.5 }), 404);
			expectProblem(await curator.request('PATCH', '/api/collections/TRN', { reserveFraction: 0.5 }), 403);
		});
	});

	it('a good rule change is on the trail with before and after', async () => {
		const r = await admin.request('PATCH', '/api/collections/ICE', { maxAirExposureMin: 12 });
		expect(r.status).toBe(200);
		expect(r.body.rules.maxAirExposureMin).toBe(12);
		const [ev] = (await db().query(`SELECT before, after FROM trail_events WHERE action = 'collection.rules_changed' ORDER BY seq DESC LIMIT 1`))[0] as { before: any; after: any }[];
		expect(ev.before.maxAirExposureMin).toBe(10);
		expect(ev.after.maxAirExposureMin).toBe(12);
		await admin.request('PATCH', '/api/collections/ICE', { maxAirExposureMin: 10 });
	});
});
