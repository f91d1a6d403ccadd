import { fail } from '@sveltejs/kit';
import { z } from 'zod';
import { requestReset } from '$lib/server/accounts';
import { emailField } from '$lib/server/validation';
import { zodFields } from '$lib/server/api';
import type { Actions } from './$types';

export const actions: Actions = {
	default: async ({ request }) => {
		const form = await request.formData();
		const parsed = z.object({ email: emailField }).safeParse({ email: String(form.get('email') ?? '') });
		if (!parsed.success) return fail(400, { fields: zodFields(parsed.error.issues), sent: false });
		await requestReset(parsed.data.email);
		// The same answer whether or not the account exists.
		return { sent: true, fields: {} as Record<string, string> };
	}
};
