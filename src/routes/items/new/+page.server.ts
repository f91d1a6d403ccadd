import { fail, redirect } from '@sveltejs/kit';
import { MassInputError, parseMgToUg } from '$lib/domain/mass';
import { ApiProblem, zodFields } from '$lib/server/api';
import { Collection, models } from '$lib/server/models';
import { listBalances } from '$lib/server/registry/balances';
import { whoFrom } from '$lib/server/registry/common';
import { registerInput, registerSpecimen } from '$lib/server/registry/items';
import type { Actions, PageServerLoad } from './$types';
import { itemPath } from '$lib/domain/codes';

export const load: PageServerLoad = async () => {
	models();
	const collections = await Collection.findAll({ attributes: ['prefix', 'name'], order: [['prefix', 'ASC']] });
	return { collections: collections.map((c) => ({ prefix: c.prefix, name: c.name })), balances: (await listBalances(models())).filter((b) => b.usable) };
};

export const actions: Actions = {
	default: async ({ request, locals }) => {
		const f = await request.formData();
		const values = Object.fromEntries(['collection', 'mass', 'description', 'container', 'storagePlace', 'provenance', 'balanceId', 'reason'].map((k) => [k, String(f.get(k) ?? '').trim()]));
		let massUg: number | undefined;
		try {
			massUg = parseMgToUg(values.mass, 'mass');
		} catch (e) {
			if (!(e instanceof MassInputError)) throw e;
			return fail(422, { values, message: e.message, fields: { mass: e.message } as Record<string, string> });
		}
		const parsed = registerInput.safeParse({
			collection: values.collection, massUg, description: values.description,
			...(values.container ? { container: values.container } : {}),
			...(values.storagePlace ? { storagePlace: values.storagePlace } : {}),
			...(values.provenance ? { provenance: values.provenance } : {}),
			...(values.balanceId ? { weighing: { balanceId: values.balanceId, ...(values.reason ? { reason: values.reason } : {}) } } : {})
		});
		if (!parsed.success) return fail(422, { values, message: 'Check the marked fields.', fields: zodFields(parsed.error.issues) });
		let code: string;
		try {
			code = (await registerSpecimen(models(), whoFrom(locals.user!), parsed.data)).code;
		} catch (e) {
			if (e instanceof ApiProblem) return fail(e.status, { values, message: e.message, fields: e.fields ?? {} });
			throw e;
		}
		redirect(303, `/items/${itemPath(code)}`);
	}
};
