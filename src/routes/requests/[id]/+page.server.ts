import { error } from '@sveltejs/kit';
import { models } from '$lib/server/models';
import { ApiProblem } from '$lib/server/api';
import {
	declineInput, declineRequest, earmarkInput, earmarkItem, getRequest, grantInput, grantRequest, startReview, submitRequest, withdrawRequest
} from '$lib/server/custody/requests';
import { submitUsage, usageInput } from '$lib/server/custody/usage';
import { isFailure, mgField } from '$lib/server/custody/forms';
import { formAction, formValues, parseForm } from '$lib/server/forms';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ params, locals }) => {
	try {
		return await getRequest(models(), locals.user!, params.id);
	} catch (e) {
		if (e instanceof ApiProblem) error(e.status, { code: e.code, message: e.message });
		throw e;
	}
};

const simple = (fn: typeof submitRequest) =>
	(async ({ params, locals, request }) => {
		const values = formValues(await request.formData());
		const r = await formAction(values, () => fn(models(), locals.user!, params.id));
		return r.ok ? { done: true } : r.failure;
	}) satisfies Actions[string];

export const actions: Actions = {
	submit: simple(submitRequest),
	withdraw: simple(withdrawRequest),
	review: simple(startReview),
	grant: async ({ params, locals, request }) => {
		const values = formValues(await request.formData());
		const mass = mgField(values, 'grantedMg', 'Granted mass');
		if (isFailure(mass)) return mass.failure;
		const parsed = parseForm({ grantedUg: mass, note: values.note || undefined, overrideReason: values.overrideReason || undefined }, grantInput);
		if (!parsed.ok) return parsed.failure;
		const r = await formAction(values, () => grantRequest(models(), locals.user!, params.id, parsed.data));
		return r.ok ? { done: true } : r.failure;
	},
	decline: async ({ params, locals, request }) => {
		const values = formValues(await request.formData());
		const parsed = parseForm({ reason: values.reason ?? '' }, declineInput);
		if (!parsed.ok) return parsed.failure;
		const r = await formAction(values, () => declineRequest(models(), locals.user!, params.id, parsed.data));
		return r.ok ? { done: true } : r.failure;
	},
	earmark: async ({ params, locals, request }) => {
		const values = formValues(await request.formData());
		const parsed = parseForm({ itemCode: values.itemCode ?? '' }, earmarkInput);
		if (!parsed.ok) return parsed.failure;
		const r = await formAction(values, () => earmarkItem(models(), locals.user!, params.id, parsed.data));
		return r.ok ? { done: true } : r.failure;
	},
	usage: async ({ params, locals, request }) => {
		const values = formValues(await request.formData());
		const fields: Record<string, number> = {};
		for (const [k, label] of [['consumedMg', 'Consumed'], ['returnedMg', 'Returned'], ['lostMg', 'Lost']] as const) {
			const m = mgField(values, k, label, { optional: k === 'lostMg' });
			if (isFailure(m)) return m.failure;
			if (m !== undefined) fields[k] = m;
		}
		const parsed = parseForm(
			{ itemCode: values.itemCode ?? '', consumedUg: fields.consumedMg, returnedUg: fields.returnedMg, lostUg: fields.lostMg ?? 0, resultsSummary: values.resultsSummary ?? '' },
			usageInput
		);
		if (!parsed.ok) return parsed.failure;
		const r = await formAction(values, () => submitUsage(models(), locals.user!, params.id, parsed.data));
		return r.ok ? { done: true, usage: r.value } : r.failure;
	}
};
