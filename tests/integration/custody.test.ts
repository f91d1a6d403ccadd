import { describe, it, expect, afterAll } from 'vitest';
import { spawn } from 'node:child_process';
import { readFileSync, writeFileSync } from 'node:fs';
import { client, signedIn, DEMO, type Client } from '../helpers/http';
import { waitForMail } from '../helpers/mail';
import { grantedAndSetAside, newRequest } from '../helpers/custody';
import { asSuperuser, snapshot } from '../helpers/scratch-db';
import { db, closeDb } from '../../src/lib/server/db';

const DB = process.env.REGOLOG_DB_NAME ?? 'regolog_test';
const PASSWORD = process.env.REGOLOG_DEMO_PASSWORD || 'brightwater-demo';
afterAll(() => closeDb());

const packing = { container: 'PTFE vial in steel can', seal: 'S-1', coolant: 'none', carrier: 'Corvane Courier', trackingRef: 'T-1' };

describe('the custody path through the API', () => {
	it('request → grant → set aside → dispatch → receipt → usage → return → closed, with signatures bound to the manifest', async () => {
		const lab = await signedIn(DEMO.fennick);
		const curator = await signedIn(DEMO.curator);
		const { id, code } = await grantedAndSetAside(lab, curator, 'HLF', 1_200);
		const prep = await curator.post('/api/transfers', { requestId: id, ...packing });
		expect(prep.status, JSON.stringify(prep.body)).toBe(201);
		const tid = prep.body.transfer.id as string;
		expect(prep.body.items).toEqual([expect.objectContaining({ code, massUg: 1_200, state: 'earmarked' })]);

		// A wrong password cannot sign, and nothing moves.
		const wrong = await curator.post(`/api/transfers/${tid}/sign`, { meaning: 'dispatched', password: 'not my password at all' });
		expect(wrong.status).toBe(422);
		expect(wrong.body.error.code).toBe('signature_refused');
		expect((await curator.get(`/api/transfers/${tid}`)).body.transfer.state).toBe('prepared');
		// The lab cannot sign the dispatch; the curator cannot sign the receipt.
		expect((await lab.post(`/api/transfers/${tid}/sign`, { meaning: 'dispatched', password: PASSWORD })).status).toBe(403);
		const sent = await curator.post(`/api/transfers/${tid}/sign`, { meaning: 'dispatched', password: PASSWORD });
		expect(sent.status, JSON.stringify(sent.body)).toBe(201);
		expect(sent.body.signature.manifestSha256).toMatch(/^[0-9a-f]{64}$/);
		expect((await curator.post(`/api/transfers/${tid}/sign`, { meaning: 'received_intact', password: PASSWORD })).status).toBe(403);

		// Another lab cannot see it at all, let alone sign it.
		const marrow = await signedIn(DEMO.marrow);
		expect((await marrow.post(`/api/transfers/${tid}/sign`, { meaning: 'received_intact', password: PASSWORD })).status).toBe(404);
		expect((await marrow.get(`/api/transfers/${tid}`)).status).toBe(404);

		const got = await lab.post(`/api/transfers/${tid}/sign`, { meaning: 'received_intact', password: PASSWORD });
		expect(got.status, JSON.stringify(got.body)).toBe(201);
		// A receipt cannot be signed twice.
		const twice = await lab.post(`/api/transfers/${tid}/sign`, { meaning: 'received_damaged', password: PASSWORD, note: 'second thoughts' });
		expect(twice.status).toBe(409);
		const after = (await lab.get(`/api/transfers/${tid}`)).body;
		expect(after.transfer.state).toBe('received');
		expect(after.signatures.map((s: { meaning: string; verifies: boolean; printedName: string; role: string }) => [s.meaning, s.verifies, s.role])).toEqual([
			['dispatched', true, 'curator'],
			['received_intact', true, 'lab_member']
		]);
		expect(after.items[0]).toMatchObject({ code, state: 'on_loan' });
		const req = (await lab.get(`/api/requests/${id}`)).body.request;
		expect(req.state).toBe('fulfilled');

		// Usage: 900 consumed, 300 returned: closes exactly.
		const used = await lab.post(`/api/requests/${id}/usage`, { itemCode: code, consumedUg: 900, returnedUg: 300, resultsSummary: 'Alanine and isovaline enantiomers measured in triplicate.' });
		expect(used.status, JSON.stringify(used.body)).toBe(201);
		expect(used.body.result).toMatchObject({ gapUg: 0, flagged: false, itemState: 'on_loan' });
		const ledger = (await curator.get(`/api/items/${code}/ledger`)).body;
		expect(ledger.entries.map((e: { kind: string }) => e.kind)).toContain('consumed');
		expect(ledger.closes).toBe(true);
		expect(ledger.massUg).toBe(300);
		expect((await curator.get(`/api/items/${code}`)).body.item.massUg).toBe(300);

		const ret = await lab.post('/api/transfers', { itemCodes: [code], ...packing });
		expect(ret.status, JSON.stringify(ret.body)).toBe(201);
		const rid = ret.body.transfer.id;
		expect(ret.body.items[0].massUg).toBe(300);
		expect((await lab.post(`/api/transfers/${rid}/sign`, { meaning: 'dispatched', password: PASSWORD })).status).toBe(201);
		expect((await curator.post(`/api/transfers/${rid}/sign`, { meaning: 'received_intact', password: PASSWORD })).status).toBe(201);
		expect((await lab.get(`/api/requests/${id}`)).body.request.state).toBe('closed');

		// The receipt PDF, for both sides and the auditor.
		const auditor = await signedIn(DEMO.auditor);
		for (const c of [curator, lab, auditor]) {
			const res = await fetch(`${process.env.REGOLOG_API_TEST_PORT ? `http://127.0.0.1:${process.env.REGOLOG_API_TEST_PORT}` : 'http://127.0.0.1:24325'}/api/transfers/${tid}/receipt`, { headers: { cookie: c.cookie! } });
			expect(res.status).toBe(200);
			expect(res.headers.get('content-type')).toBe('application/pdf');
			expect(Buffer.from(await res.arrayBuffer()).subarray(0, 5).toString()).toBe('%PDF-');
		}
		// Every step is on the trail.
		const trail = (await auditor.get(`/api/trail/events?subjectType=transfer&subjectId=${tid}`)).body.events.map((e: { action: string }) => e.action);
		expect(trail).toEqual(['transfer.prepared', 'transfer.signed.dispatched', 'transfer.signed.received_intact']);
	});

	it('a signature no longer verifies once the manifest changes', async () => {
		const lab = await signedIn(DEMO.marrow);
		const curator = await signedIn(DEMO.curator);
		const { id } = await grantedAndSetAside(lab, curator, 'HLF', 700);
		const tid = (await curator.post('/api/transfers', { requestId: id, ...packing })).body.transfer.id;
		const signed = await curator.post(`/api/transfers/${tid}/sign`, { meaning: 'dispatched', password: PASSWORD });
		expect(signed.body.signatures[0].verifies).toBe(true);
		await asSuperuser(DB, (c) => c.query(`UPDATE transfers SET tracking_ref = 'altered afterwards' WHERE id = $1`, [tid]));
		const now = (await curator.get(`/api/transfers/${tid}`)).body;
		expect(now.signatures[0].verifies).toBe(false);
		expect(now.manifestSha256).not.toBe(now.signatures[0].manifestSha256);
		await asSuperuser(DB, (c) => c.query(`UPDATE transfer_items SET mass_ug = mass_ug + 1 WHERE transfer_id = $1`, [tid]));
		await asSuperuser(DB, (c) => c.query(`UPDATE transfers SET tracking_ref = 'T-1' WHERE id = $1`, [tid]));
		expect((await curator.get(`/api/transfers/${tid}`)).body.signatures[0].verifies).toBe(false);
		await asSuperuser(DB, (c) => c.query(`UPDATE transfer_items SET mass_ug = mass_ug - 1 WHERE transfer_id = $1`, [tid]));
		expect((await curator.get(`/api/transfers/${tid}`)).body.signatures[0].verifies).toBe(true);
	});

	it('a usage report that does not close is flagged, and one that invents mass is refused', async () => {
		const lab = await signedIn(DEMO.fennick);
		const curator = await signedIn(DEMO.curator);
		const { id, code } = await grantedAndSetAside(lab, curator, 'HLF', 900);
		const tid = (await curator.post('/api/transfers', { requestId: id, ...packing })).body.transfer.id;
		await curator.post(`/api/transfers/${tid}/sign`, { meaning: 'dispatched', password: PASSWORD });
		await lab.post(`/api/transfers/${tid}/sign`, { meaning: 'received_intact', password: PASSWORD });
		const before = await snapshot(db(), ['schema_migrations', 'sessions', 'sign_in_failures', 'mail_outbox']);
		const tooMuch = await lab.post(`/api/requests/${id}/usage`, { itemCode: code, consumedUg: 900, returnedUg: 200, resultsSummary: 'More than we had, which cannot be.' });
		expect(tooMuch.status).toBe(422);
		expect(tooMuch.body.error.code).toBe('mass_appeared');
		expect(await snapshot(db(), ['schema_migrations', 'sessions', 'sign_in_failures', 'mail_outbox'])).toEqual(before);
		const gap = await lab.post(`/api/requests/${id}/usage`, { itemCode: code, consumedUg: 500, returnedUg: 300, resultsSummary: 'Some material stuck to the spatula, unquantified.' });
		expect(gap.status).toBe(201);
		expect(gap.body.result.gapUg).toBe(100);
		expect(gap.body.result.flagged).toBe(true);
		expect(gap.body.usage[0]).toMatchObject({ allocatedUg: 900, consumedUg: 500, returnedUg: 300, lostUg: 0, gapUg: 100, gapFlagged: true });
		const again = await lab.post(`/api/requests/${id}/usage`, { itemCode: code, consumedUg: 500, returnedUg: 300, resultsSummary: 'Trying to change the report.' });
		expect(again.status).toBe(409);
	});
});

describe('grants never exceed what a collection can give', () => {
	it('concurrent grants by two curators stay within the allocatable mass', async () => {
		const lab = await signedIn(DEMO.marrow);
		const curator = await signedIn(DEMO.curator);
		const admin = await signedIn(DEMO.admin);
		const probe = await newRequest(lab, 'TRN', 1);
		const budget = (await curator.get(`/api/requests/${probe}`)).body.budget.grantableUg as number;
		expect(budget).toBeGreaterThan(10);
		// Each asks for a little over a third: at most two can be granted.
		const each = Math.floor(budget / 3) + 1;
		const ids = await Promise.all(Array.from({ length: 6 }, () => newRequest(lab, 'TRN', each)));
		const results = await Promise.all(ids.map((id, i) => (i % 2 ? admin : curator).post(`/api/requests/${id}/grant`, { grantedUg: each })));
		const granted = results.filter((r) => r.status === 200).length;
		const refused = results.filter((r) => r.status === 409);
		expect(granted).toBe(2);
		expect(refused).toHaveLength(4);
		for (const r of refused) expect(r.body.error.availableUg).toBeLessThan(each);
		const left = (await curator.get(`/api/requests/${probe}`)).body.budget.grantableUg as number;
		expect(left).toBe(budget - 2 * each);
		// Only an admin, with a reason, may cut into the reserve.
		const big = await newRequest(lab, 'TRN', left + 1);
		expect((await curator.post(`/api/requests/${big}/grant`, { grantedUg: left + 1, overrideReason: 'Curators cannot override the reserve.' })).status).toBe(409);
		const ok = await admin.post(`/api/requests/${big}/grant`, { grantedUg: left + 1, overrideReason: 'Board decision on the isovaline question' });
		expect(ok.status, JSON.stringify(ok.body)).toBe(200);
		expect(ok.body.request.reserveOverrideReason).toBe('Board decision on the isovaline question');
	});
});

describe('lab members see only their own lab', () => {
	it('requests and transfers of another lab are invisible, by list and by id', async () => {
		const fennick = await signedIn(DEMO.fennick);
		const marrow = await signedIn(DEMO.marrow);
		const id = await newRequest(fennick, 'HLF', 50);
		const theirs = (await marrow.get('/api/requests')).body.requests as { id: string; lab: { name: string } }[];
		expect(theirs.every((r) => r.lab.name === 'Marrow Isotope Group')).toBe(true);
		expect(theirs.some((r) => r.id === id)).toBe(false);
		expect((await marrow.get(`/api/requests/${id}`)).status).toBe(404);
		expect((await marrow.post(`/api/requests/${id}/withdraw`, {})).status).toBe(404);
		const transfers = (await marrow.get('/api/transfers')).body.transfers as { from: { name: string }; to: { name: string } }[];
		expect(transfers.length).toBeGreaterThan(0);
		expect(transfers.every((x) => x.from.name === 'Marrow Isotope Group' || x.to.name === 'Marrow Isotope Group')).toBe(true);
		const page = await fetch(`http://127.0.0.1:${process.env.REGOLOG_API_TEST_PORT ?? 24325}/requests/${id}`, { headers: { cookie: marrow.cookie! } });
		expect(page.status).toBe(404);
	});
});

describe('bad input changes nothing', () => {
	it('every custody route answers a clear 4xx and writes nothing', async () => {
		const lab = await signedIn(DEMO.fennick);
		const curator = await signedIn(DEMO.curator);
		const id = await newRequest(lab, 'HLF', 100);
		// The outbox is left out: the app's sender marks earlier mail sent meanwhile.
		const before = await snapshot(db(), ['schema_migrations', 'sessions', 'sign_in_failures', 'mail_outbox']);
		const cases: [() => Promise<{ status: number; body: any }>, number, RegExp][] = [
			[() => lab.post('/api/requests', {}), 422, /collection/],
			[() => lab.post('/api/requests', { collection: 'TRN', massUg: -5, destructive: true }), 422, /negative/],
			[() => lab.post('/api/requests', { collection: 'TRN', massUg: 1.5, destructive: true }), 422, /whole number/],
			[() => lab.post('/api/requests', { collection: 'TRN', massUg: '100', destructive: true }), 422, /JSON number/],
			[() => lab.post('/api/requests', { collection: 'TRN', massUg: 1e30, destructive: true }), 422, /too large/],
			[() => lab.post('/api/requests', { collection: 'ZZZ', massUg: 100, destructive: true }), 422, /no collection/],
			[() => lab.post('/api/requests', { collection: 'TRN', massUg: 100, destructive: 'yes' }), 422, /true or false/],
			[() => lab.post('/api/requests', { collection: 'TRN', massUg: 100, destructive: true, submit: true }), 422, /analysisPlan/],
			[() => lab.post('/api/requests', { collection: 'TRN', massUg: 100, destructive: true, expectedConsumptionUg: 200 }), 422, /exceed/],
			[() => lab.post('/api/requests', { collection: 'TRN', massUg: 100, destructive: true, techniques: 'GC' }), 422, /list/],
			[() => curator.post(`/api/requests/${id}/grant`, { grantedUg: 101 }), 422, /more than/],
			[() => curator.post(`/api/requests/${id}/grant`, { grantedUg: 0 }), 422, /more than zero/],
			[() => curator.post(`/api/requests/${id}/decline`, { reason: '' }), 422, /reason/],
			[() => curator.post(`/api/requests/${id}/earmark`, { itemCode: 'TRN-00001/A' }), 409, /granted/],
			[() => curator.post(`/api/requests/not-an-id/grant`, { grantedUg: 5 }), 404, /No such request/],
			[() => curator.post('/api/transfers', { requestId: id }), 422, /container/],
			[() => curator.post('/api/transfers', { requestId: id, container: 'vial', coolant: 'liquid helium' }), 422, /coolant/],
			[() => curator.post('/api/transfers', { requestId: id, container: 'vial' }), 409, /granted/],
			[() => curator.post('/api/transfers', { requestId: id, container: 'vial', expectedArrival: 'tomorrow' }), 422, /YYYY-MM-DD/],
			[() => lab.post('/api/transfers', { container: 'vial', itemCodes: ['TRN-00001/Z'] }), 400, /check character/],
			[() => curator.post(`/api/transfers/00000000-0000-4000-8000-000000000000/sign`, { meaning: 'dispatched' }), 422, /password/],
			[() => curator.post(`/api/transfers/00000000-0000-4000-8000-000000000000/sign`, { meaning: 'stolen', password: PASSWORD }), 422, /meaning/],
			[() => lab.post(`/api/requests/${id}/usage`, { itemCode: 'TRN-00001/Y', consumedUg: 1, returnedUg: 0, resultsSummary: 'short' }), 422, /resultsSummary/]
		];
		for (const [call, status, message] of cases) {
			const r = await call();
			expect(r.status, JSON.stringify(r.body)).toBe(status);
			expect(r.body.error.message + JSON.stringify(r.body.error.fields ?? {})).toMatch(message);
		}
		expect(await snapshot(db(), ['schema_migrations', 'sessions', 'sign_in_failures', 'mail_outbox'])).toEqual(before);
	});
});

describe('mail outage', () => {
	it('with the mail relay stopped every step still commits, and the notifications arrive once it returns', async () => {
		const pidFile = process.env.REGOLOG_SMTP_PID_FILE!;
		const port = Number(process.env.REGOLOG_SMTP_PORT);
		process.kill(Number(readFileSync(pidFile, 'utf8')), 'SIGTERM');
		await waitPort(port, false);
		const lab = await signedIn(DEMO.marrow);
		const curator = await signedIn(DEMO.curator);
		const id = await newRequest(lab, 'HLF', 333);
		const grant = await curator.post(`/api/requests/${id}/grant`, { grantedUg: 333, note: 'granted during the mail outage' });
		expect(grant.status).toBe(200);
		const queued = await asSuperuser(DB, (c) => c.query(`SELECT count(*)::int AS n FROM mail_outbox WHERE status = 'queued' AND body_text LIKE '%granted during the mail outage%'`));
		expect(queued.rows[0].n).toBeGreaterThan(0);
		// The relay returns (as its own process, like the one the stack started).
		const child = spawn(process.execPath, ['fakes/smtp.mjs', '--port', String(port), '--dir', process.env.REGOLOG_MAIL_DIR!], { detached: true, stdio: 'ignore' });
		child.unref();
		writeFileSync(pidFile, String(child.pid));
		await waitPort(port, true);
		await asSuperuser(DB, (c) => c.query(`UPDATE mail_outbox SET next_attempt_at = now() WHERE status = 'queued'`));
		const mail = await waitForMail((m) => m.to.includes(DEMO.marrow) && m.text.includes('granted during the mail outage'), 30_000);
		expect(mail.subject).toMatch(/granted/);
		expect(mail.text).toMatch(new RegExp(`/requests/${id}`));
	});
});

async function waitPort(port: number, open: boolean) {
	const net = await import('node:net');
	for (let i = 0; i < 100; i++) {
		const up = await new Promise<boolean>((res) => {
			const s = net.connect({ port, host: '127.0.0.1' });
			s.once('connect', () => { s.destroy(); res(true); });
			s.once('error', () => res(false));
		});
		if (up === open) return;
		await new Promise((r) => setTimeout(r, 100));
	}
	throw new Error(`port ${port} did not become ${open ? 'open' : 'closed'}`);
}

void client;
