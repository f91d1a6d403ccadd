import { redirect } from '@sveltejs/kit';
import { models } from '$lib/server/models';
import { createRequest, requestInput } from '$lib/server/custody/requests';
import { collectionChoices, isFailure, mgField } from '$lib/server/custody/forms';
import { formAction, formValues, parseForm } from '$lib/server/forms';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async () => ({ collections: await collectionChoices() });

export const actions: Actions = {
	default: async ({ request, locals }) => {
		const data = await request.formData();
		const values = formValues(data);
		const mass = mgField(values, 'massMg', 'Mass');
		if (isFailure(mass)) return mass.failure;
		const expected = mgField(values, 'expectedMg', 'Expected consumption', { optional: true });
		if (isFailure(expected)) return expected.failure;
		const parsed = parseForm(
			{
				collection: values.collection ?? '',
				massUg: mass,
				analysisPlan: values.analysisPlan ?? '',
				techniques: (values.techniques ?? '').split(',').map((s) => s.trim()).filter(Boolean),
				destructive: values.destructive === 'yes',
				...(expected !== undefined ? { expectedConsumptionUg: expected } : {}),
				returnPlan: values.returnPlan ?? '',
				justification: values.justification ?? '',
				submit: values.intent === 'submit'
			},
			requestInput
		);
		if (!parsed.ok) return parsed.failure;
		const r = await formAction(values, () => createRequest(models(), locals.user!, parsed.data));
		if (!r.ok) return r.failure;
		redirect(303, `/requests/${r.value}`);
	}
};
