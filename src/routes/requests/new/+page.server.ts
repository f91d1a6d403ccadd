import { redirect } from '@sveltejs/kit';
import { models } from '$lib/server/models';
import { createRequest, requestInput } from '$lib/server/custody/requests';
import { collectionChoices, isFailure, mgField } from '$lib/server/custody/forms';
import { formAction, formValues, parseForm } from '$lib/server/forms';
import { offerQuery } from '$lib/server/offer/offer';
import type { OfferConstraints } from '$lib/domain/offer';
import type { Actions, PageServerLoad } from './$types';

/**
 * The form, pre-filled from the offer ("Ask for this"): the collection, the items picked and the
 * offer's filters, which the request keeps as its constraints. Filters that do not read are left out
 * and said so.
 */
export const load: PageServerLoad = async ({ url }) => {
	const p = Object.fromEntries([...url.searchParams].filter(([k]) => k !== 'items'));
	const parsed = offerQuery.safeParse(p);
	const itemCodes = (url.searchParams.get('items') ?? '').split(',').map((s) => s.trim().toUpperCase()).filter(Boolean).slice(0, 20);
	const constraints: OfferConstraints = parsed.success ? parsed.data.constraints : {};
	return {
		collections: await collectionChoices(),
		prefill: { collection: parsed.success ? (parsed.data.collection ?? '') : '', constraints, itemCodes, ignored: !parsed.success && Object.keys(p).length > 0 }
	};
};

function readJson(text: string | undefined): unknown {
	if (!text) return {};
	try {
		return JSON.parse(text);
	} catch {
		return text;
	}
}

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
				pieces: values.pieces ? Number(values.pieces) : 1,
				constraints: readJson(values.constraints),
				itemCodes: (values.itemCodes ?? '').split(',').map((s) => s.trim()).filter(Boolean),
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
