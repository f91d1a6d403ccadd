// The coolant's caution travels with the hazard: the transfer records the net mass of dry ice
// (required with dry ice, refused without it), and the custody receipt PDF and the "dispatched"
// message carry the same caution as the transfer page (src/lib/cautions.ts), deferring to the
// carrier's dangerous-goods rules, the safety officers and local regulations. The facility is named
// by the `facility.name` setting everywhere. The words are Regolog's own (DESIGN §7); no published
// source is checked here.
import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { QueryTypes } from 'sequelize';
import { BASE, signedIn, DEMO, type Client } from '../helpers/http';
import { waitForMail } from '../helpers/mail';
import { grantedAndSetAside } from '../helpers/custody';
import { pdftext } from '../helpers/pdf';
import { db, closeDb } from '../../src/lib/server/db';
import { COOLANT_CAUTIONS } from '../../src/lib/cautions';

const PASSWORD = process.env.REGOLOG_DEMO_PASSWORD || 'brightwater-demo';
const FACILITY = 'Larkspur Test Curation Hall';
const packing = { container: 'PTFE vial in steel can', seal: 'S-9', carrier: 'Corvane Courier', trackingRef: 'T-9' };

let lab: Client;
let curator: Client;
let before: unknown;
const transfers = async () => Number((await db().query<{ n: number }>('SELECT count(*)::int AS n FROM transfers', { type: QueryTypes.SELECT }))[0].n);

beforeAll(async () => {
	lab = await signedIn(DEMO.fennick);
	curator = await signedIn(DEMO.curator);
	[{ value: before }] = await db().query<{ value: unknown }>(`SELECT value FROM settings WHERE key = 'facility.name'`, { type: QueryTypes.SELECT });
	await db().query(`UPDATE settings SET value = to_jsonb(CAST(:v AS text)) WHERE key = 'facility.name'`, { replacements: { v: FACILITY } });
});
afterAll(async () => {
	await db().query(`UPDATE settings SET value = CAST(:v AS jsonb) WHERE key = 'facility.name'`, { replacements: { v: JSON.stringify(before) } });
	await closeDb();
});

describe('dry ice on a transfer', () => {
	it('needs its net mass with dry ice, refuses one with another coolant or out of range, and changes nothing when refused', async () => {
		const { id } = await grantedAndSetAside(lab, curator, 'HLF', 700);
		const n = await transfers();
		for (const [body, message] of [
			[{ coolant: 'dry_ice' }, /is required with dry ice/],
			[{ coolant: 'dry_shipper', dryIceKg: 2 }, /only recorded with dry ice/],
			[{ coolant: 'dry_ice', dryIceKg: 0 }, /more than 0 kg/],
			[{ coolant: 'dry_ice', dryIceKg: 2.0005 }, /at most 3 decimals/],
			[{ coolant: 'dry_ice', dryIceKg: '2.5 kg' }, /not a net mass in kg/],
			[{ coolant: 'dry_ice', dryIceKg: 501 }, /more than 500 kg/]
		] as const) {
			const r = await curator.post('/api/transfers', { requestId: id, ...packing, ...body });
			expect(r.status, JSON.stringify(body)).toBe(422);
			expect(r.body.error.fields.dryIceKg, JSON.stringify(body)).toMatch(message);
		}
		expect(await transfers()).toBe(n);
	});

	it('is shown on the transfer, its receipt carries the caution, and the "dispatched" message too', async () => {
		const { id, code } = await grantedAndSetAside(lab, curator, 'HLF', 800);
		const prep = await curator.post('/api/transfers', { requestId: id, ...packing, coolant: 'dry_ice', dryIceKg: '2,25' });
		expect(prep.status, JSON.stringify(prep.body)).toBe(201);
		const x = prep.body.transfer;
		expect(x).toMatchObject({ coolant: 'dry_ice', dryIceKg: 2.25, dryIceText: '2.25 kg' });
		expect(x.from.name).toBe(FACILITY);

		const page = await curator.get(`/transfers/${x.id}`);
		expect(page.status).toBe(200);
		expect(String(page.body)).toContain('Dry ice, net mass');
		expect(String(page.body)).toContain('2.25 kg');
		expect(String(page.body)).toContain(`/labels?codes=${encodeURIComponent(code)}`);

		const sent = await curator.post(`/api/transfers/${x.id}/sign`, { meaning: 'dispatched', password: PASSWORD });
		expect(sent.status, JSON.stringify(sent.body)).toBe(201);

		const res = await fetch(`${BASE}/api/transfers/${x.id}/receipt`, { headers: { cookie: curator.cookie!, origin: BASE } });
		expect(res.status).toBe(200);
		const text = pdftext(Buffer.from(await res.arrayBuffer())).replace(/\s+/g, ' ');
		const caution = COOLANT_CAUTIONS.dry_ice;
		expect(text).toContain(`Regolog · ${FACILITY}`);
		expect(text).toContain('Dry ice, net mass: 2.25 kg');
		for (const words of [caution.title, 'Dry ice is a dangerous good in transport.', "carrier's dangerous-goods rules", "institution's safety officers", 'local regulations']) {
			expect(text, words).toContain(words);
		}

		const mail = await waitForMail((m) => m.to.includes(DEMO.fennick) && m.text.includes(x.number) && /dispatched/i.test(m.subject), 30_000);
		const body = mail.text.replace(/\s+/g, ' ');
		expect(body).toContain('Dry ice, net mass: 2.25 kg.');
		expect(body).toContain(caution.title);
		for (const line of caution.lines) expect(body).toContain(line);
		expect(body).toContain(caution.defer);
		expect(body).toContain(`— Regolog, ${FACILITY}`);
	});

	it('a dry shipper is one that may be a dangerous good, as the carrier decides, on the receipt too', async () => {
		const { id } = await grantedAndSetAside(lab, curator, 'HLF', 600);
		const prep = await curator.post('/api/transfers', { requestId: id, ...packing, coolant: 'dry_shipper' });
		expect(prep.status, JSON.stringify(prep.body)).toBe(201);
		expect(prep.body.transfer.dryIceKg).toBeNull();
		const res = await fetch(`${BASE}/api/transfers/${prep.body.transfer.id}/receipt`, { headers: { cookie: curator.cookie!, origin: BASE } });
		const text = pdftext(Buffer.from(await res.arrayBuffer())).replace(/\s+/g, ' ');
		expect(text).toContain(COOLANT_CAUTIONS.dry_shipper.title);
		expect(text).toContain('may be a dangerous good in transport, as the carrier decides');
		expect(text).not.toContain('Dry ice, net mass');
	});
});
