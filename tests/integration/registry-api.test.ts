import { describe, it, expect, beforeAll } from 'vitest';
import { signedIn, DEMO, type Client } from '../helpers/http';
import { newSpecimen, balanceByReadability, mistype } from '../helpers/registry';
import { formatCode, parseCode } from '../../src/lib/domain/codes';
import { netUncertainty } from '../../src/lib/domain/mass';

let curator: Client;
let auditor: Client;
let fennick: Client;
let marrow: Client;

beforeAll(async () => {
	[curator, auditor, fennick, marrow] = await Promise.all([DEMO.curator, DEMO.auditor, DEMO.fennick, DEMO.marrow].map((e) => signedIn(e)));
});

describe('registering a parent specimen', () => {
	it('answers 201 with a fresh code whose check character verifies, the mass, and a first ledger entry', async () => {
		const r = await curator.post('/api/items', { collection: 'hlf', massUg: 5_432_100, description: 'Fragment for the registry test', container: 'PTFE jar', storagePlace: 'Cabinet C-9' });
		expect(r.status).toBe(201);
		const item = r.body.item;
		expect(parseCode(item.code)).toMatchObject({ ok: true, prefix: 'HLF' });
		expect(item).toMatchObject({ kind: 'specimen', massUg: 5_432_100, initialMassUg: 5_432_100, state: 'stored', parentCode: null, container: 'PTFE jar', holder: { kind: 'facility' } });
		expect(r.headers.get('location')).toBe(`/api/items/${encodeURIComponent(item.code)}`);
		const ledger = await curator.get(`/api/items/${item.code}/ledger`);
		expect(ledger.body.entries).toEqual([expect.objectContaining({ seq: 1, kind: 'registered', deltaUg: 5_432_100, balanceUg: 5_432_100 })]);
		expect(ledger.body.closes).toBe(true);
	});

	it('records a weighing on a calibrated balance with its GUM uncertainty (JCGM 100:2008, 5.1.2)', async () => {
		const b = await balanceByReadability(curator, 1);
		const r = await curator.post('/api/items', { collection: 'TRN', massUg: 1_500_000, description: 'weighed test specimen', weighing: { balanceId: b.id, tareUg: 250_000 } });
		expect(r.status).toBe(201);
		expect(r.body.item.uUg).toBeCloseTo(b.netUUg, 10);
		expect(r.body.item.expandedUg).toBeCloseTo(2 * b.netUUg, 10);
	});

	it('gives consecutive serials in one collection', async () => {
		const a = parseCode(await newSpecimen(curator, 1000));
		const b = parseCode(await newSpecimen(curator, 1000));
		expect(a.ok && b.ok && b.serial - a.serial).toBe(1);
	});

	it('refuses auditors and lab members (403) and changes nothing', async () => {
		for (const c of [auditor, fennick]) {
			const r = await c.post('/api/items', { collection: 'HLF', massUg: 1000, description: 'not allowed' });
			expect(r.status).toBe(403);
			expect(r.body.error.code).toBe('forbidden');
		}
	});
});

describe('splitting through the API', () => {
	it('creates the children, moves the mass exactly and shows it in lineage and ledger', async () => {
		const parent = await newSpecimen(curator, 10_000);
		const r = await curator.post(`/api/items/${parent}/splits`, { children: [{ massUg: 1_500 }, { massUg: 2_500 }] });
		expect(r.status).toBe(201);
		expect(r.body).toMatchObject({ parentCode: parent, parentBeforeUg: 10_000, parentAfterUg: 6_000, childrenTotalUg: 4_000, lossUg: 0, reweighed: false });
		const codes = r.body.children.map((c: { code: string }) => c.code);
		expect(codes).toHaveLength(2);
		for (const code of codes) expect(parseCode(code).ok).toBe(true);

		const item = await curator.get(`/api/items/${parent}`);
		expect(item.body.item.budget).toEqual({ initialMassUg: 10_000, childrenInitialUg: 4_000, lossesUg: 0, usedUg: 0, remainingUg: 6_000, children: 2, splits: 1, balanced: true });

		const lineage = await curator.get(`/api/items/${codes[1]}/lineage`);
		expect(lineage.body.ancestors.map((a: { code: string }) => a.code)).toEqual([parent]);
		const down = await curator.get(`/api/items/${parent}/lineage`);
		expect(down.body.descendants.map((d: { code: string }) => d.code).sort()).toEqual([...codes].sort());

		const ledger = await curator.get(`/api/items/${parent}/ledger`);
		expect(ledger.body.entries.map((e: { kind: string; deltaUg: number; balanceUg: number }) => [e.kind, e.deltaUg, e.balanceUg])).toEqual([
			['registered', 10_000, 10_000],
			['split_out', -1_500, 8_500],
			['split_out', -2_500, 6_000]
		]);
		const child = await curator.get(`/api/items/${codes[0]}/ledger`);
		expect(child.body.entries).toEqual([expect.objectContaining({ kind: 'split_in', deltaUg: 1_500, balanceUg: 1_500, counterpartCode: parent })]);
	});

	it('ledgers a measured loss when the parent is reweighed, with u_L from GUM 5.1.2', async () => {
		const b = await balanceByReadability(curator, 1);
		const parent = await newSpecimen(curator, 100_000, { weighing: { balanceId: b.id } });
		const r = await curator.post(`/api/items/${parent}/splits`, { children: [{ massUg: 30_000 }, { massUg: 20_000 }], parentAfterUg: 49_990, balanceId: b.id });
		expect(r.status).toBe(201);
		expect(r.body.lossUg).toBe(10);
		const u = netUncertainty({ d: b.readabilityUg, s: b.repeatabilityUg });
		// u_L = √(u₀² + u₁² + Σuᵢ²), four weighings on one balance (JCGM 100:2008, 5.1.2)
		expect(r.body.lossUUg).toBeCloseTo(Math.sqrt(4 * u * u), 9);
		const ledger = await curator.get(`/api/items/${parent}/ledger`);
		expect(ledger.body.entries.at(-1)).toMatchObject({ kind: 'split_loss', deltaUg: -10, balanceUg: 49_990 });
		expect(ledger.body.closes).toBe(true);
	});

	it('needs a reason for children below the balance minimum weight (USP <41>) and records it', async () => {
		const b = await balanceByReadability(curator, 1);
		const parent = await newSpecimen(curator, 50_000);
		const small = b.minimumWeightUg - 1;
		const refused = await curator.post(`/api/items/${parent}/splits`, { children: [{ massUg: small }], balanceId: b.id });
		expect(refused.status).toBe(422);
		expect(refused.body.error.code).toBe('reason_required');
		expect(refused.body.error.fields['children.0.massUg']).toMatch(/below the minimum weight/);
		const ok = await curator.post(`/api/items/${parent}/splits`, { children: [{ massUg: small }], balanceId: b.id, reason: 'trace aliquot for a screening run' });
		expect(ok.status).toBe(201);
		expect(ok.body.children[0].belowMinimum).toBe(true);
		expect(ok.body.verdict).toBe('needs-reason');
	});

	it('refuses a load above the balance’s capacity, in a split and at registration, naming the field, and changes nothing', async () => {
		const admin = await signedIn(DEMO.admin);
		const made = await admin.post('/api/balances', { name: `Capacity test balance ${Date.now()}`, readabilityUg: 2, repeatabilityUg: 0.5, calibrationDue: '2099-01-31', capacityUg: 5_000_000 });
		expect(made.status, JSON.stringify(made.body)).toBe(201);
		const b = made.body.balance;
		expect(b.capacityUg).toBe(5_000_000);
		try {
			const parent = await newSpecimen(curator, 8_000_000);
			// the 1 mg child fits; the 7.999 g parent left behind does not
			const r = await curator.post(`/api/items/${parent}/splits`, { children: [{ massUg: 1_000 }], balanceId: b.id, parentAfterUg: 8_000_000 - 1_000 - 5 });
			expect(r.status).toBe(422);
			expect(r.body.error.code).toBe('above_capacity');
			expect(r.body.error.fields).toEqual({ parentAfterUg: `7998.995 mg is above the capacity of ${b.name} (5000.000 mg)` });
			expect((await curator.get(`/api/items/${parent}`)).body.item.massUg).toBe(8_000_000);
			expect((await curator.get(`/api/items/${parent}/ledger`)).body.entries).toHaveLength(1);
			// a child with its tare counts as what is put on the pan
			const tared = await curator.post(`/api/items/${parent}/splits`, { children: [{ massUg: 1_000, tareUg: 4_999_500 }], balanceId: b.id });
			expect(tared.status).toBe(422);
			expect(Object.keys(tared.body.error.fields)).toEqual(['children.0.massUg']);
			const reg = await curator.post('/api/items', { collection: 'HLF', massUg: 6_000_000, description: 'too heavy for the pan', weighing: { balanceId: b.id } });
			expect(reg.status).toBe(422);
			expect(reg.body.error.fields).toHaveProperty('massUg');
			// the parent reweighed on a balance that holds it, the child on this one
			const sm = await balanceByReadability(curator, 10);
			const ok = await curator.post(`/api/items/${parent}/splits`, { children: [{ massUg: 2_000 }], balanceId: b.id, parentBalanceId: sm.id, parentAfterUg: 8_000_000 - 2_000 - 40 });
			expect(ok.status, JSON.stringify(ok.body)).toBe(201);
			expect(ok.body.parentBalance).toMatchObject({ id: sm.id });
			expect((await curator.get(`/api/items/${parent}`)).body.item).toMatchObject({ massUg: 8_000_000 - 2_000 - 40, uUg: sm.netUUg });
			// a parent balance without a reweighed mass says what is missing
			const lone = await curator.post(`/api/items/${parent}/splits`, { children: [{ massUg: 1_000 }], balanceId: b.id, parentBalanceId: sm.id });
			expect(lone.status).toBe(422);
			expect(lone.body.error.fields).toEqual({ parentAfterUg: 'is required with parentBalanceId' });
		} finally {
			// retired again, so later tests that look for a balance by its readability do not meet it
			expect((await admin.request('PATCH', `/api/balances/${b.id}`, { active: false })).status).toBe(200);
		}
	});

	it('refuses a weighing on a balance past its calibration date', async () => {
		const admin = await signedIn(DEMO.admin);
		const made = await admin.post('/api/balances', { name: `Overdue test balance ${Date.now()}`, readabilityUg: 1, repeatabilityUg: 0.5, calibrationDue: '2020-01-31' });
		expect(made.status).toBe(201);
		expect(made.body.balance).toMatchObject({ overdue: true, usable: false, minimumWeightUg: 1000 });
		const parent = await newSpecimen(curator, 50_000);
		const r = await curator.post(`/api/items/${parent}/splits`, { children: [{ massUg: 5_000 }], balanceId: made.body.balance.id });
		expect(r.status).toBe(422);
		expect(r.body.error.code).toBe('calibration_overdue');
		expect(r.body.error.message).toContain('2020-01-31');
		expect((await curator.get(`/api/items/${parent}`)).body.item.massUg).toBe(50_000);
	});

	it('answers 409 with the available micrograms when the children exceed the parent', async () => {
		const parent = await newSpecimen(curator, 3_000);
		const r = await curator.post(`/api/items/${parent}/splits`, { children: [{ massUg: 2_000 }, { massUg: 1_001 }] });
		expect(r.status).toBe(409);
		expect(r.body.error).toMatchObject({ code: 'budget_exceeded', availableUg: 3_000, requestedUg: 3_001 });
	});

	it('refuses a split where mass would appear beyond 2·u_L', async () => {
		const b = await balanceByReadability(curator, 1);
		const parent = await newSpecimen(curator, 20_000, { weighing: { balanceId: b.id } });
		const r = await curator.post(`/api/items/${parent}/splits`, { children: [{ massUg: 10_000 }], parentAfterUg: 10_050, balanceId: b.id });
		expect(r.status).toBe(422);
		expect(r.body.error.code).toBe('mass_appeared');
	});
});

describe('codes', () => {
	it('answers a code with a wrong check character with a clear message, never another item', async () => {
		const code = await newSpecimen(curator, 1000);
		for (const path of ['', '/lineage', '/ledger']) {
			const r = await curator.get(`/api/items/${mistype(code)}${path}`);
			expect(r.status).toBe(400);
			expect(r.body.error.code).toBe('wrong_check_character');
			expect(r.body.error.message).toMatch(/check character is .*, expected /);
		}
		const q = await curator.get(`/api/items?q=${mistype(code)}`);
		expect(q.status).toBe(400);
		expect(q.body.error.code).toBe('wrong_check_character');
		const ok = await curator.get(`/api/items?q=${code.toLowerCase()}`);
		expect(ok.body.items.map((i: { code: string }) => i.code)).toEqual([code]);
	});

	it('answers a well-formed code that does not exist with 404', async () => {
		const r = await curator.get(`/api/items/${formatCode('HLF', 99_999)}`);
		expect(r.status).toBe(404);
		expect(r.body.error.code).toBe('not_found');
	});
});

describe('lab visibility', () => {
	async function heldBy(lab: Client) {
		const r = await lab.get('/api/items?limit=500');
		expect(r.status).toBe(200);
		return r.body.items as { code: string; holder: { name: string } }[];
	}

	it('shows a lab only the items it holds', async () => {
		const f = await heldBy(fennick);
		const m = await heldBy(marrow);
		expect(f.length).toBeGreaterThan(0);
		expect(m.length).toBeGreaterThan(0);
		expect(new Set(f.map((i) => i.holder.name))).toEqual(new Set(['Fennick Organics Lab']));
		expect(new Set(m.map((i) => i.holder.name))).toEqual(new Set(['Marrow Isotope Group']));
	});

	it('answers a Marrow analyst guessing a Fennick-held code with 404 on every item route', async () => {
		const [item] = await heldBy(fennick);
		expect((await fennick.get(`/api/items/${item.code}`)).status).toBe(200);
		for (const path of ['', '/lineage', '/ledger']) {
			const r = await marrow.get(`/api/items/${item.code}${path}`);
			expect(r.status).toBe(404);
			expect(r.body.error.message).not.toContain('Fennick');
		}
		const guessed = await marrow.get(`/api/items/${formatCode('HLF', 99_998)}`);
		expect(guessed.body).toEqual({ error: { ...guessed.body.error, code: 'not_found' } });
		const listed = await marrow.get(`/api/items?q=${item.code}`);
		expect(listed.body.items).toEqual([]);
	});

	it('keeps facility-held ancestors out of a lab member’s lineage, counting them as withheld', async () => {
		const [item] = await heldBy(fennick);
		const r = await fennick.get(`/api/items/${item.code}/lineage`);
		expect(r.status).toBe(200);
		expect(r.body.ancestors).toEqual([]);
		expect(r.body.withheld).toBeGreaterThan(0);
		const staff = await auditor.get(`/api/items/${item.code}/lineage`);
		expect(staff.body.ancestors.length).toBeGreaterThan(0);
		expect(staff.body.withheld).toBe(0);
		expect(r.body.withheld).toBeGreaterThanOrEqual(staff.body.ancestors.length);
	});

	it('lets nobody but curators split', async () => {
		const [item] = await heldBy(fennick);
		for (const c of [fennick, marrow, auditor]) {
			const r = await c.post(`/api/items/${item.code}/splits`, { children: [{ massUg: 1 }] });
			expect(r.status).toBe(403);
		}
	});
});

describe('the items list', () => {
	it('pages by keyset without gaps or repeats, in order', async () => {
		const all: string[] = [];
		let after: string | null = null;
		let pages = 0;
		do {
			const r: { status: number; body: { items: { code: string; massUg: number }[]; next: string | null } } = await curator.get(
				`/api/items?collection=TRN&sort=mass&dir=desc&limit=7${after ? `&after=${after}` : ''}`
			);
			expect(r.status).toBe(200);
			all.push(...r.body.items.map((i) => `${i.massUg}|${i.code}`));
			after = r.body.next;
			pages++;
		} while (after && pages < 100);
		const whole = await curator.get('/api/items?collection=TRN&sort=mass&dir=desc&limit=500');
		expect(all).toEqual(whole.body.items.map((i: { code: string; massUg: number }) => `${i.massUg}|${i.code}`));
		expect(new Set(all).size).toBe(all.length);
		const masses = all.map((s) => Number(s.split('|')[0]));
		expect(masses).toEqual([...masses].sort((a, b) => b - a));
		expect(pages).toBeGreaterThan(2);
	});

	it('filters by collection, state, kind and holder', async () => {
		const r = await curator.get('/api/items?collection=TRN&kind=aliquot&state=on_loan&limit=500');
		expect(r.status).toBe(200);
		expect(r.body.items.length).toBeGreaterThan(0);
		for (const i of r.body.items) expect(i).toMatchObject({ collection: 'TRN', kind: 'aliquot', state: 'on_loan' });
		const facility = await curator.get('/api/items?holder=facility&state=on_loan');
		expect(facility.body.items).toEqual([]);
	});

	it('exports the same view as CSV', async () => {
		const view = await curator.get('/api/items?collection=ICE&limit=500');
		const csv = await curator.get('/api/items/export?collection=ICE');
		expect(csv.status).toBe(200);
		expect(csv.headers.get('content-type')).toContain('text/csv');
		const lines = String(csv.body).trim().split('\n');
		expect(lines[0]).toMatch(/^code,kind,collection,parent_code/);
		expect(lines.slice(1).map((l) => l.split(',')[0])).toEqual(view.body.items.map((i: { code: string }) => i.code));
	});
});
