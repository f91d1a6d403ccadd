import { error } from '@sveltejs/kit';
import { models } from '$lib/server/models';
import { ApiProblem } from '$lib/server/api';
import { cancelTransfer, getTransfer, signInput, signTransfer } from '$lib/server/custody/transfers';
import { formAction, formValues, parseForm } from '$lib/server/forms';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ params, locals }) => {
	try {
		return await getTransfer(models(), locals.user!, params.id);
	} catch (e) {
		if (e instanceof ApiProblem) error(e.status, { code: e.code, message: e.message });
		throw e;
	}
};

export const actions: Actions = {
	sign: async ({ params, locals, request }) => {
		const values = formValues(await request.formData());
		const parsed = parseForm({ meaning: values.meaning ?? '', password: values.password ?? '', note: values.note ?? '' }, signInput);
		if (!parsed.ok) return parsed.failure;
		const r = await formAction(values, () => signTransfer(models(), locals.user!, params.id, parsed.data));
		return r.ok ? { signed: r.value } : r.failure;
	},
	cancel: async ({ params, locals, request }) => {
		const values = formValues(await request.formData());
		const r = await formAction(values, () => cancelTransfer(models(), locals.user!, params.id));
		return r.ok ? { cancelled: true } : r.failure;
	}
};
