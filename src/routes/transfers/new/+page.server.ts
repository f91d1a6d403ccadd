import { error, redirect } from '@sveltejs/kit';
import { QueryTypes } from 'sequelize';
import { models } from '$lib/server/models';
import { ApiProblem } from '$lib/server/api';
import { getRequest } from '$lib/server/custody/requests';
import { prepareInput, prepareTransfer } from '$lib/server/custody/transfers';
import { formAction, formValues, parseForm } from '$lib/server/forms';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ url, locals }) => {
	const id = url.searchParams.get('request');
	if (!id) error(400, { code: 'bad_request', message: 'Open this page from a request: ?request=<id> is missing.' });
	try {
		const req = await getRequest(models(), locals.user!, id);
		let candidates = req.items.filter((i) => i.state === 'earmarked');
		if (locals.user!.role === 'lab_member') {
			const returnable = new Set(req.usage.filter((u) => u.returnedUg > 0).map((u) => u.code));
			candidates = req.items.filter((i) => i.state === 'on_loan' && returnable.has(i.code));
		}
		const [busy] = [await models().query<{ code: string }>(
			`SELECT i.code FROM transfer_items ti JOIN transfers x ON x.id = ti.transfer_id JOIN items i ON i.id = ti.item_id WHERE x.state IN ('prepared', 'dispatched') AND x.request_id = :r`,
			{ type: QueryTypes.SELECT, replacements: { r: req.request.id } }
		)];
		const onTransfer = new Set(busy.map((b) => b.code));
		return { request: req.request, candidates: candidates.filter((c) => !onTransfer.has(c.code)) };
	} catch (e) {
		if (e instanceof ApiProblem) error(e.status, { code: e.code, message: e.message });
		throw e;
	}
};

export const actions: Actions = {
	default: async ({ request, locals, url }) => {
		const data = await request.formData();
		const values = formValues(data);
		const codes = data.getAll('itemCodes').map(String);
		const lab = locals.user!.role === 'lab_member';
		const parsed = parseForm(
			{
				...(lab ? {} : { requestId: url.searchParams.get('request') ?? '' }),
				...(codes.length ? { itemCodes: codes } : lab ? { itemCodes: [] } : {}),
				container: values.container ?? '', seal: values.seal ?? '', atmosphere: values.atmosphere ?? '', temperature: values.temperature ?? '',
				coolant: values.coolant ?? 'none', ...(values.dryIceKg?.trim() ? { dryIceKg: values.dryIceKg } : {}), carrier: values.carrier ?? '', trackingRef: values.trackingRef ?? '',
				...(values.expectedArrival ? { expectedArrival: values.expectedArrival } : {}), note: values.note ?? ''
			},
			prepareInput
		);
		if (!parsed.ok) return parsed.failure;
		const r = await formAction(values, () => prepareTransfer(models(), locals.user!, parsed.data));
		if (!r.ok) return r.failure;
		redirect(303, `/transfers/${r.value}`);
	}
};
