import type { RequestEvent } from '@sveltejs/kit';
import { lucia } from './lucia';
import { models } from '../models';
import { appendTrail } from '../trail';

/** Ends the current session (cookie sessions; a bearer token is revoked on the account page). */
export async function signOut(event: RequestEvent): Promise<void> {
	const l = lucia();
	if (event.locals.session && !event.locals.session.viaToken) {
		await l.invalidateSession(event.locals.session.id);
		const user = event.locals.user!;
		const sequelize = models();
		await sequelize.transaction((t) =>
			appendTrail(sequelize, t, { actor: { id: user.id, label: user.email }, action: 'user.signed_out', subjectType: 'user', subjectId: user.id })
		);
	}
	const blank = l.createBlankSessionCookie();
	event.cookies.set(blank.name, blank.value, { path: '.', ...blank.attributes });
	event.locals.user = null;
	event.locals.session = null;
}
