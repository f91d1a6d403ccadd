import { describe, it, expect } from 'vitest';
import { client, signedIn, DEMO } from '../helpers/http';
import { GENERIC_FAILURE } from '../../src/lib/server/auth/service';

describe('JSON sign-in', () => {
	it('signs a demo curator in with a session cookie and knows who they are', async () => {
		const c = await signedIn(DEMO.curator);
		expect(c.cookie).toMatch(/^regolog_session=/);
		const me = await c.get('/api/me');
		expect(me.status).toBe(200);
		expect(me.body.user).toMatchObject({ email: DEMO.curator, role: 'curator', labId: null });
	});

	it('answers a wrong password and an unknown account with the same message', async () => {
		const wrong = await client().post('/api/auth/sign-in', { email: DEMO.auditor, password: 'not-the-password-at-all' });
		const unknown = await client().post('/api/auth/sign-in', { email: 'nobody@brightwater.example', password: 'not-the-password-at-all' });
		expect(wrong.status).toBe(401);
		expect(unknown.status).toBe(401);
		expect(wrong.body).toEqual(unknown.body);
		expect(wrong.body.error.message).toBe(GENERIC_FAILURE);
	});

	it('signing out ends access', async () => {
		const c = await signedIn(DEMO.fennick);
		const cookie = c.cookie;
		expect((await c.post('/api/auth/sign-out')).status).toBe(200);
		const again = client(cookie);
		const me = await again.get('/api/me');
		expect(me.status).toBe(401);
		expect(me.body.error.code).toBe('unauthenticated');
	});
});
