import { error, fail, redirect, type RequestEvent } from '@sveltejs/kit';
import { passwordSetSchema, redeemToken, tokenOwner } from './accounts';
import { lucia } from './auth/lucia';
import { ApiProblem, zodFields } from './api';
import { passwordProblem } from './auth/password';

/** Shared load and action of the invitation and reset pages: both set a password through a single-use link. */
export function passwordLinkPage(purpose: 'invite' | 'reset') {
	return {
		load: async ({ params }: { params: { token: string } }) => {
			const owner = await tokenOwner(purpose, params.token);
			if (!owner) error(410, { code: 'token_invalid', message: 'This link has been used or has expired. Ask for a new one.' });
			return { name: owner.user.name, email: owner.user.email, purpose };
		},
		action: async (event: RequestEvent<{ token: string }>) => {
			const form = await event.request.formData();
			const parsed = passwordSetSchema.safeParse({ password: String(form.get('password') ?? ''), confirm: String(form.get('confirm') ?? '') });
			if (!parsed.success) return fail(400, { fields: zodFields(parsed.error.issues), message: 'Please correct the fields marked below.' });
			const owner = await tokenOwner(purpose, event.params.token);
			if (owner) {
				const problem = passwordProblem(parsed.data.password, [owner.user.email, owner.user.email.split('@')[0], owner.user.name]);
				if (problem) return fail(400, { fields: { password: problem }, message: problem });
			}
			try {
				const user = await redeemToken(purpose, event.params.token, parsed.data.password);
				const session = await lucia().createSession(user.id, {});
				const c = lucia().createSessionCookie(session.id);
				event.cookies.set(c.name, c.value, { path: '/', ...c.attributes });
			} catch (e) {
				if (e instanceof ApiProblem) return fail(e.status, { fields: e.fields ?? {}, message: e.message });
				throw e;
			}
			redirect(303, '/');
		}
	};
}
