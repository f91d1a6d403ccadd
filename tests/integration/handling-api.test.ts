import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { QueryTypes } from 'sequelize';
import { signedIn, DEMO, type Client } from '../helpers/http';
import { snapshot } from '../helpers/scratch-db';
import { newSpecimen } from '../helpers/registry';
import { db, closeDb } from '../../src/lib/server/db';
import { formatCode } from '../../src/lib/domain/codes';

// a well-formed code (right check character) that names no item
const NO_SUCH = formatCode('HLF', 99_999);

let curator: Client;
let auditor: Client;
afterAll(() => closeDb());
beforeAll(async () => {
	curator = await signedIn(DEMO.curator);
	auditor = await signedIn(DEMO.auditor);
});

const MIN = 60_000;
const at = (ms: number) => new Date(ms).toISOString();
async function splitOnce(code: string, massUg: number): Promise<{ child: string; splitAt: number; splitId: string }> {
	const r = await curator.post(`/api/items/${code}/splits`, { children: [{ massUg }] });
	expect(r.status, JSON.stringify(r.body)).toBe(201);
	const [row] = await db().query<{ at: Date }>('SELECT at FROM splits WHERE id = :id', { type: QueryTypes.SELECT, replacements: { id: r.body.splitId } });
	return { child: r.body.children[0].code, splitAt: new Date(row.at).getTime(), splitId: r.body.splitId };
}
async function session(body: Record<string, unknown>) {
	const r = await curator.post('/api/handling-sessions', { purpose: 'test session', ...body });
	expect(r.status, JSON.stringify(r.body)).toBe(201);
	return r.body.session;
}
async function blank(): Promise<string> {
	const r = await curator.post('/api/items', { collection: 'HLF', kind: 'blank', massUg: 1, description: 'witness coupon for a test' });
	expect(r.status).toBe(201);
	return r.body.item.code;
}

describe('exposure through the API: three generations, mixed atmospheres', () => {
	// Worked example (Regolog's inheritance rule, domain/exposure.ts; interval arithmetic by hand):
	// S is split into C at tC, C into G at tG.
	//   A on S, cleanroom air, tC−300 … tC−240 min            → G inherits 60 min
	//   K on C, ambient air,   tG−90 … tG−80 min              → G inherits 10 min; C's own 10 min
	//   B on S, nitrogen,      tC−30 … tC+5 min, clipped at tC → G and C inherit 30 min
	//   N on G, nitrogen,      tG+3 … tG+8 min                 → G's own 5 min
	// G: nitrogen 5 own + 30 inherited = 35; handling 60 + 10 + 30 + 5 = 105 min (disjoint);
	// only A has an analysed blank: coverage 60 / 105; uncovered K, B, N.
	it('counts own and inherited minutes per class, clips at the split, and works out coverage', async () => {
		const s = await newSpecimen(curator, 50_000);
		const { child: c, splitAt: tC } = await splitOnce(s, 20_000);
		const { child: g, splitAt: tG } = await splitOnce(c, 5_000);
		const witness = await blank();
		await db().query(`INSERT INTO blank_analyses (blank_item_id, summary) SELECT id, 'blank run below LOQ' FROM items WHERE code = :c`, { replacements: { c: witness } });
		await session({ items: [s], atmosphere: 'cleanroom_air', start: at(tC - 300 * MIN), end: at(tC - 240 * MIN), blanks: [witness] });
		await session({ items: [c], atmosphere: 'ambient_air', start: at(tG - 90 * MIN), end: at(tG - 80 * MIN) });
		const b = await session({ items: [s], atmosphere: 'nitrogen_glovebox', start: at(tC - 30 * MIN), end: at(tC + 5 * MIN), temperatureC: 21, humidityPct: 0.4 });
		await session({ items: [g], atmosphere: 'nitrogen_glovebox', start: at(tG + 3 * MIN), end: at(tG + 8 * MIN) });

		const r = await curator.get(`/api/items/${g}/exposure`);
		expect(r.status).toBe(200);
		const rep = r.body.report;
		expect(rep.minutes.own).toEqual({ nitrogen_glovebox: 5, argon_glovebox: 0, cleanroom_air: 0, ambient_air: 0, vacuum: 0 });
		expect(rep.minutes.inherited).toEqual({ nitrogen_glovebox: 30, argon_glovebox: 0, cleanroom_air: 60, ambient_air: 10, vacuum: 0 });
		expect(rep.minutes.total.nitrogen_glovebox).toBe(35);
		expect(rep.handlingMinutes).toBe(105);
		expect(rep.coverage.coveredMinutes).toBe(60);
		expect(rep.coverage.share).toBeCloseTo(60 / 105, 12);
		expect(rep.coverage.uncovered.map((u: { itemId: string }) => u.itemId).sort()).toEqual([c, g, s].sort());
		const clipped = rep.sessions.find((x: { sessionId: string }) => x.sessionId === b.id);
		expect(clipped).toMatchObject({ itemId: s, generation: 2, inherited: true, clipped: true, minutes: 30 });
		expect(rep.violations).toEqual([]); // HLF allows ambient air up to 240 min

		const rc = (await curator.get(`/api/items/${c}/exposure`)).body.report;
		expect(rc.minutes.own.ambient_air).toBe(10);
		expect(rc.minutes.inherited).toMatchObject({ nitrogen_glovebox: 30, cleanroom_air: 60 });
		expect(rc.minutes.total.nitrogen_glovebox).toBe(30); // G's own session is not C's
	});

	it('flags the seeded ambient-air exposure beyond the ICE limit', async () => {
		const [run7] = await db().query<{ code: string }>(
			`SELECT i.code FROM items i JOIN collections c ON c.id = i.collection_id WHERE c.prefix = 'ICE' AND i.kind = 'specimen' ORDER BY i.serial LIMIT 1`,
			{ type: QueryTypes.SELECT }
		);
		const r = await auditor.get(`/api/items/${run7.code}/exposure`);
		expect(r.status).toBe(200);
		expect(r.body.report.violations).toEqual([expect.objectContaining({ kind: 'ambient-air-over-limit', minutes: 25, limitMinutes: 10 })]);
		expect(r.body.lineageFlags.find((f: { relation: string }) => f.relation === 'self').violations).toBe(1);
	});
});

describe('bad sessions are refused and change nothing', () => {
	let item: string;
	let witness: string;
	const t0 = Date.now() - 600 * MIN;
	beforeAll(async () => {
		item = await newSpecimen(curator, 30_000);
		witness = await blank();
		await session({ items: [item], atmosphere: 'nitrogen_glovebox', start: at(t0), end: at(t0 + 60 * MIN), blanks: [witness] });
	});
	const unchanged = async (fn: () => Promise<void>) => {
		const before = await snapshot(db(), ['schema_migrations', 'sessions']);
		await fn();
		expect(await snapshot(db(), ['schema_migrations', 'sessions'])).toEqual(before);
	};
	const refused = async (body: Record<string, unknown>, status: number, code: string, field: string, message: RegExp) => {
		const r = await curator.post('/api/handling-sessions', { items: [item], atmosphere: 'nitrogen_glovebox', start: at(t0 + 120 * MIN), end: at(t0 + 150 * MIN), purpose: 'bad input', ...body });
		expect(r.status, JSON.stringify(r.body)).toBe(status);
		expect(r.body.error.code).toBe(code);
		expect(Object.keys(r.body.error.fields ?? {})).toContain(field);
		expect(r.body.error.message).toMatch(message);
	};

	it('end before start, unknown blank, atmosphere not allowed, contact not allowed, overlapping duplicate', async () => {
		await unchanged(async () => {
			await refused({ start: at(t0 + 200 * MIN), end: at(t0 + 190 * MIN) }, 422, 'end_before_start', 'end', /must end after it starts/);
			await refused({ end: at(t0 + 120 * MIN) }, 422, 'end_before_start', 'end', /end after it starts/);
			await refused({ blanks: [witness, NO_SUCH] }, 422, 'unknown_item', 'blanks.1', new RegExp(`no item ${NO_SUCH}`));
			await refused({ blanks: [item] }, 422, 'not_a_blank', 'blanks.0', /is not a blank/);
			await refused({ atmosphere: 'vacuum' }, 422, 'atmosphere_not_allowed', 'atmosphere', /Vacuum is not allowed for HLF/);
			await refused({ contacts: ['Aluminium foil wrap'] }, 422, 'contact_not_allowed', 'contacts.0', /aluminium foil\) is not an allowed contact material for HLF/);
			await refused({ contacts: ['Brass tongs'] }, 422, 'unknown_contact', 'contacts.0', /not in the HLF catalogue/);
			await refused({ items: [item, NO_SUCH] }, 422, 'unknown_item', 'items.1', /no item/);
			await refused({ start: at(t0 + 30 * MIN), end: at(t0 + 90 * MIN) }, 409, 'overlapping_session', 'items.0', new RegExp(`${item} is already in a session`));
			await refused({ start: 'yesterday' }, 422, 'invalid_input', 'start', /date and time/);
			await refused({ humidityPct: 140 }, 422, 'invalid_input', 'humidityPct', /0–100/);
		});
	});

	it('the session form answers the same refusals beside the fields and writes nothing', async () => {
		await unchanged(async () => {
			const form = (fields: Record<string, string>) =>
				curator.request('POST', '/handling/new', new URLSearchParams({ items: item, atmosphere: 'nitrogen_glovebox', start: '2031-01-01T10:00', end: '2031-01-01T09:00', purpose: 'bad input', ...fields }).toString(), {
					'content-type': 'application/x-www-form-urlencoded', 'x-sveltekit-action': 'true', accept: 'application/json'
				});
			const endFirst = await form({});
			expect(JSON.stringify(endFirst.body)).toMatch(/must be after the start/);
			const t = (ms: number) => at(ms).slice(0, 16);
			const overlap = await form({ start: t(t0 + 10 * MIN), end: t(t0 + 20 * MIN) });
			expect(JSON.stringify(overlap.body)).toMatch(/already in a session/);
			const noBlank = await form({ start: t(t0 + 300 * MIN), end: t(t0 + 310 * MIN), blanks: NO_SUCH });
			expect(JSON.stringify(noBlank.body)).toMatch(new RegExp(`no item ${NO_SUCH}`));
		});
	});
});

describe('a split without a handling session', () => {
	it('is flagged until a curator attaches one, and attaching is on the trail', async () => {
		const parent = await newSpecimen(curator, 40_000);
		const { child, splitId } = await splitOnce(parent, 10_000);
		const flagged = (await curator.get(`/api/items/${child}/exposure`)).body.splitsWithoutSession;
		expect(flagged).toEqual([expect.objectContaining({ splitId, role: 'origin', flag: 'no handling session on record' })]);

		const other = await newSpecimen(curator, 1_000);
		const foreign = await session({ items: [other], atmosphere: 'nitrogen_glovebox', start: at(Date.now() - 40 * MIN), end: at(Date.now() - 35 * MIN) });
		const wrong = await curator.post(`/api/splits/${splitId}/handling-session`, { sessionId: foreign.id });
		expect(wrong.status).toBe(422);
		expect(wrong.body.error.fields.sessionId).toMatch(`does not list ${parent}`);

		const s = await session({ items: [parent], atmosphere: 'nitrogen_glovebox', start: at(Date.now() - 20 * MIN), end: at(Date.now() - 5 * MIN) });
		const ok = await curator.post(`/api/splits/${splitId}/handling-session`, { sessionId: s.id });
		expect(ok.status, JSON.stringify(ok.body)).toBe(200);
		expect((await curator.get(`/api/items/${child}/exposure`)).body.splitsWithoutSession).toEqual([]);
		const again = await curator.post(`/api/splits/${splitId}/handling-session`, { sessionId: s.id });
		expect(again.status).toBe(409);
		const [ev] = await db().query<{ n: number }>(`SELECT count(*)::int AS n FROM trail_events WHERE action = 'split.session_attached' AND subject_id = :id`, { type: QueryTypes.SELECT, replacements: { id: splitId } });
		expect(ev.n).toBe(1);
		// nothing else about a split can change
		await expect(db().query('UPDATE splits SET reason = :r WHERE id = :id', { replacements: { r: 'changed', id: splitId } })).rejects.toThrow(/append-only/);
	});

	it('a split can name its session when it is recorded', async () => {
		const parent = await newSpecimen(curator, 40_000);
		const s = await session({ items: [parent], atmosphere: 'cleanroom_air', start: at(Date.now() - 30 * MIN), end: at(Date.now() - 10 * MIN) });
		const r = await curator.post(`/api/items/${parent}/splits`, { children: [{ massUg: 1_000 }], handlingSessionId: s.id });
		expect(r.status, JSON.stringify(r.body)).toBe(201);
		expect((await curator.get(`/api/items/${r.body.children[0].code}/exposure`)).body.splitsWithoutSession).toEqual([]);
	});
});

describe('the auditor’s history', () => {
	it('lists handling, blanks, lineage and weighings in time order, filters by kind and exports CSV and PDF', async () => {
		const parent = await newSpecimen(curator, 40_000);
		const w = await blank();
		await session({ items: [parent], atmosphere: 'nitrogen_glovebox', start: at(Date.now() - 50 * MIN), end: at(Date.now() - 45 * MIN), blanks: [w], purpose: 'history check' });
		const h = await auditor.get(`/api/items/${parent}/history`);
		expect(h.status).toBe(200);
		const kinds = h.body.entries.map((e: { kind: string }) => e.kind);
		expect(kinds).toEqual(expect.arrayContaining(['lineage', 'handling', 'blank']));
		const times = h.body.entries.map((e: { at: string }) => e.at);
		expect([...times].sort()).toEqual(times);
		expect(h.body.entries.find((e: { kind: string }) => e.kind === 'blank').summary).toContain(w);
		const only = await auditor.get(`/api/items/${parent}/history?kind=handling`);
		expect(only.body.entries.length).toBe(1);
		expect(only.body.entries[0].summary).toContain('history check');
		const none = await auditor.get(`/api/items/${parent}/history?actor=nobody-by-that-name`);
		expect(none.body.entries).toEqual([]);
		const bad = await auditor.get(`/api/items/${parent}/history?kind=gossip`);
		expect(bad.status).toBe(400);

		const csv = await auditor.request('GET', `/api/items/${parent}/history?format=csv`);
		expect(csv.headers.get('content-type')).toMatch(/text\/csv/);
		expect(String(csv.body).split('\n')[0]).toBe('at_utc,kind,actor,summary,record');
		expect(String(csv.body)).toContain('history check');
		const pdf = await fetch(`${process.env.REGOLOG_API_TEST_PORT ? `http://127.0.0.1:${process.env.REGOLOG_API_TEST_PORT}` : ''}/api/items/${parent}/history?format=pdf`, { headers: { cookie: auditor.cookie! } });
		expect(pdf.headers.get('content-type')).toBe('application/pdf');
		expect(Buffer.from(await pdf.arrayBuffer()).subarray(0, 5).toString()).toBe('%PDF-');
	});
});
