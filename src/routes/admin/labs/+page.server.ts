import { createLab, labSchema } from '$lib/server/accounts';
import { listLabs } from '$lib/server/directory';
import { formAction, formValues, parseForm } from '$lib/server/forms';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ locals }) => ({ labs: await listLabs(locals.user!) });

export const actions: Actions = {
	create: async ({ request, locals }) => {
		const values = formValues(await request.formData());
		const parsed = parseForm(values, labSchema);
		if (!parsed.ok) return parsed.failure;
		const r = await formAction(values, () => createLab(locals.user!, parsed.data));
		if (!r.ok) return r.failure;
		return { created: parsed.data.name };
	}
};
