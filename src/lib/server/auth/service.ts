import { z } from 'zod';
import { User, models } from '../models';
import { verifyPassword, decoyHash } from './password';
import { retryAfterSeconds, recordFailure, clearFailures } from './throttle';
import { lucia } from './lucia';
import { appendTrail } from '../trail';

export const signInSchema = z.object({
	email: z.string().trim().min(3, 'Enter your e-mail address.').max(254, 'An e-mail address has at most 254 characters.').email('Enter a valid e-mail address.'),
	password: z.string().min(1, 'Enter your password.').max(1024, 'That password is too long.')
});

export type SignInResult =
	| { ok: true; sessionId: string; cookie: ReturnType<ReturnType<typeof lucia>['createSessionCookie']>; user: User }
	| { ok: false; status: 401 | 429; code: string; message: string; retryAfter?: number };

export const GENERIC_FAILURE = 'The e-mail address or password is not right, or the account cannot sign in.';

/** Checks the credentials, throttling repeated failures; on success creates a session. */
export async function signIn(email: string, password: string, meta: { ip: string; userAgent: string }): Promise<SignInResult> {
	models();
	const wait = await retryAfterSeconds(email, meta.ip);
	if (wait > 0) {
		return { ok: false, status: 429, code: 'throttled', message: `Too many failed attempts. Try again in ${wait} s.`, retryAfter: wait };
	}
	const user = await User.findOne({ where: { email: email.trim().toLowerCase() } });
	// Verify against a decoy when there is no usable account, so timing reveals nothing.
	const good = user && user.active && user.passwordHash
		? await verifyPassword(user.passwordHash, password)
		: (await verifyPassword(await decoyHash(), password), false);
	if (!good || !user) {
		await recordFailure(email, meta.ip);
		return { ok: false, status: 401, code: 'invalid_credentials', message: GENERIC_FAILURE };
	}
	await clearFailures(email);
	const session = await lucia().createSession(user.id, { ip: meta.ip, userAgent: meta.userAgent });
	const sequelize = models();
	await sequelize.transaction((t) =>
		appendTrail(sequelize, t, {
			actor: { id: user.id, label: user.email },
			action: 'user.signed_in',
			subjectType: 'user',
			subjectId: user.id,
			after: { ip: meta.ip }
		})
	);
	return { ok: true, sessionId: session.id, cookie: lucia().createSessionCookie(session.id), user };
}
