import { z } from 'zod';
import { changePassword, issueToken, listTokens, revokeToken, tokenCreateSchema } from '$lib/server/accounts';
import { formAction, formValues, parseForm } from '$lib/server/forms';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ locals }) => ({ tokens: await listTokens(locals.user!.id) });

const passwordChange = z
	.object({ current: z.string().min(1, 'Enter your current password.').max(1024), password: z.string().max(1024), confirm: z.string().max(1024) })
	.refine((v) => v.password === v.confirm, { path: ['confirm'], message: 'The two passwords differ.' });

export const actions: Actions = {
	token: async ({ request, locals }) => {
		const values = formValues(await request.formData());
		const parsed = parseForm({ label: values.label ?? '', days: values.days ? Number(values.days) : null }, tokenCreateSchema);
		if (!parsed.ok) return parsed.failure;
		const r = await formAction(values, () => issueToken(locals.user!, parsed.data));
		if (!r.ok) return r.failure;
		return { created: { label: r.value.token.label, secret: r.value.secret } };
	},
	revoke: async ({ request, locals }) => {
		const values = formValues(await request.formData());
		const r = await formAction(values, () => revokeToken(locals.user!, String(values.id ?? '')));
		if (!r.ok) return r.failure;
		return { revoked: true };
	},
	password: async ({ request, locals }) => {
		const values = formValues(await request.formData());
		const parsed = parseForm(values, passwordChange);
		if (!parsed.ok) return parsed.failure;
		const r = await formAction(values, () => changePassword(locals.user!, parsed.data.current, parsed.data.password, locals.session?.id ?? null));
		if (!r.ok) return r.failure;
		return { passwordChanged: true };
	}
};
