import { describe, it, expect, afterAll } from 'vitest';
import { QueryTypes } from 'sequelize';
import { client, signedIn, DEMO } from '../helpers/http';
import { db, closeDb } from '../../src/lib/server/db';

afterAll(() => closeDb());

describe('GET /api/trail/verify', () => {
	it('lets an auditor verify the whole trail', async () => {
		const auditor = await signedIn(DEMO.auditor);
		const [{ n }] = await db().query<{ n: number }>('SELECT count(*)::int AS n FROM trail_events', { type: QueryTypes.SELECT });
		const r = await auditor.get('/api/trail/verify');
		expect(r.status).toBe(200);
		expect(r.body).toEqual({ ok: true, events: expect.any(Number), firstBrokenAt: null });
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
