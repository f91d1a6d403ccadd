import { Lucia, TimeSpan } from 'lucia';
import { SequelizeAdapter } from './adapter';
import { config } from '../config';
import type { Role } from './types';

function secureCookies(): boolean {
	// Secure cookies everywhere but plain-HTTP loopback development.
	const u = new URL(config.origin);
	const loopback = ['127.0.0.1', 'localhost', '[::1]'].includes(u.hostname);
	return !(loopback && u.protocol === 'http:');
}

let instance: ReturnType<typeof make> | null = null;

function make() {
	return new Lucia(new SequelizeAdapter(), {
		sessionExpiresIn: new TimeSpan(12, 'h'),
		sessionCookie: {
			name: 'regolog_session',
			attributes: { secure: secureCookies(), sameSite: 'lax' }
		},
		getSessionAttributes: () => ({}),
		getUserAttributes: (a) => ({
			email: a.email,
			name: a.name,
			role: a.role,
			labId: a.labId,
			labName: a.labName,
			active: a.active
		})
	});
}

export function lucia() {
	if (!instance) instance = make();
	return instance;
}

declare module 'lucia' {
	interface Register {
		Lucia: ReturnType<typeof make>;
		DatabaseUserAttributes: {
			email: string;
			name: string;
			role: Role;
			labId: string | null;
			labName: string | null;
			active: boolean;
		};
		DatabaseSessionAttributes: { ip?: string; userAgent?: string };
	}
}
