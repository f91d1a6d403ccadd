import { describe, it, expect, afterAll } from 'vitest';
import { QueryTypes } from 'sequelize';
import { client, signedIn, DEMO } from '../helpers/http';
import { db, closeDb } from '../../src/lib/server/db';
import { checkCheckpoint, keyMap, verifyBundleBytes } from '../../src/lib/domain/trail-verify';
import { nodeTrailCrypto } from '../../src/lib/server/trail/node-crypto';

afterAll(() => closeDb());

describe('GET /api/trail/verify', () => {
	it('lets an auditor verify the whole trail', async () => {
		const auditor = await signedIn(DEMO.auditor);
		const [{ n }] = await db().query<{ n: number }>('SELECT count(*)::int AS n FROM trail_events', { type: QueryTypes.SELECT });
		const r = await auditor.get('/api/trail/verify');
		expect(r.status).toBe(200);
		expect(r.body).toMatchObject({ ok: true, events: expect.any(Number), firstBrokenAt: null });
		// the seed and the sign-in above wrote events; others may have been added since the count
		expect(n).toBeGreaterThan(0);
		expect(r.body.events).toBeGreaterThanOrEqual(n);
	});

	it('lets an admin verify too', async () => {
		const r = await (await signedIn(DEMO.admin)).get('/api/trail/verify');
		expect(r.status).toBe(200);
		expect(r.body.ok).toBe(true);
	});

	it('refuses a curator and a lab member', async () => {
		for (const who of [DEMO.curator, DEMO.fennick]) {
			const r = await (await signedIn(who)).get('/api/trail/verify');
			expect(r.status).toBe(403);
			expect(r.body.error.code).toBe('forbidden');
		}
	});

	it('asks a signed-out caller to sign in', async () => {
		const r = await client().get('/api/trail/verify');
		expect(r.status).toBe(401);
		expect(r.body.error.code).toBe('unauthenticated');
	});

	it('answers only GET', async () => {
		const r = await (await signedIn(DEMO.auditor)).post('/api/trail/verify');
		expect(r.status).toBe(405);
	});
});

describe('checkpoints, keys, incremental verification and bundles over HTTP', () => {
	it('lists signed checkpoints that verify with the listed public keys', async () => {
		const auditor = await signedIn(DEMO.auditor);
		const keys = await auditor.get('/api/trail/keys');
		expect(keys.status).toBe(200);
		expect(keys.body.keys.length).toBeGreaterThan(0);
		for (const k of keys.body.keys) expect(k).toEqual({ keyId: expect.stringMatching(/^[0-9a-f]{16}$/), publicKey: expect.stringMatching(/^-----BEGIN PUBLIC KEY-----\n[\s\S]+-----END PUBLIC KEY-----\n$/), validFrom: expect.any(String), validUntil: null, current: true });
		const r = await auditor.get('/api/trail/checkpoints');
		expect(r.status).toBe(200);
		// the seed's set-up signed one, and the server signs at start-up when the head moved
		expect(r.body.checkpoints.length).toBeGreaterThan(0);
		for (const cp of r.body.checkpoints) {
			expect(Object.keys(cp).sort()).toEqual(['hash', 'keyId', 'seq', 'signature', 'signed']);
			expect(await checkCheckpoint(cp, keyMap(keys.body.keys), nodeTrailCrypto)).toMatchObject({ ok: true });
		}
		const last = await auditor.get('/api/trail/checkpoints?last=1');
		expect(last.body.checkpoints).toEqual([r.body.checkpoints.at(-1)]);
	});

	it('verifies from a checkpoint: its signature, then every event after it', async () => {
		const auditor = await signedIn(DEMO.auditor);
		const [cp] = (await auditor.get('/api/trail/checkpoints?last=1')).body.checkpoints;
		const r = await auditor.get(`/api/trail/verify?from=${cp.seq}`);
		expect(r.status).toBe(200);
		expect(r.body).toMatchObject({ ok: true, firstBrokenAt: null, checkpoint: { seq: cp.seq, keyId: cp.keyId, signature: 'valid' } });
		expect(r.body.after).toBe(r.body.head - cp.seq);
		expect((await auditor.get('/api/trail/verify?from=latest')).body).toMatchObject({ ok: true, checkpoint: { signature: 'valid' } });
	});

	it('answers a seq that is no checkpoint, and a malformed one, with errors naming the field', async () => {
		const auditor = await signedIn(DEMO.auditor);
		const none = await auditor.get('/api/trail/verify?from=999999999');
		expect(none.status).toBe(404);
		expect(none.body.error).toMatchObject({ code: 'no_checkpoint', fields: { from: expect.any(String) } });
		const bad = await auditor.get('/api/trail/verify?from=yesterday');
		expect(bad.status).toBe(400);
		expect(bad.body.error).toMatchObject({ code: 'invalid_query', fields: { from: 'must be the seq of a signed checkpoint, or latest' } });
		const backwards = await auditor.get('/api/trail/export?from=5&to=2');
		expect(backwards.status).toBe(400);
		expect(backwards.body.error.fields).toEqual({ to: 'must not be before from' });
	});

	it('exports a bundle that verifies offline', async () => {
		const auditor = await signedIn(DEMO.auditor);
		const r = await auditor.request('GET', '/api/trail/export');
		expect(r.status).toBe(200);
		expect(r.headers.get('content-type')).toMatch(/^application\/x-ndjson/);
		const text = typeof r.body === 'string' ? r.body : JSON.stringify(r.body);
		const result = await verifyBundleBytes(new TextEncoder().encode(text), nodeTrailCrypto);
		expect(result).toMatchObject({ ok: true, from: 1, firstBrokenAt: null });
		expect(result.events).toBe(Number(r.headers.get('x-regolog-bundle-events')));
		expect(result.checkpoints.valid).toBe(result.checkpoints.total);
	});

	it('lets only an admin rotate the key, and only when asked plainly', async () => {
		const admin = await signedIn(DEMO.admin);
		const r = await admin.post('/api/trail/keys', {});
		expect(r.status).toBe(422);
		expect(r.body.error.fields).toEqual({ confirm: 'must be "rotate"' });
		const auditor = await signedIn(DEMO.auditor);
		expect((await auditor.post('/api/trail/keys', { confirm: 'rotate' })).status).toBe(403);
	});
});
