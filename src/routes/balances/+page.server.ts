import { fail } from '@sveltejs/kit';
import { ApiProblem, zodFields } from '$lib/server/api';
import { hasRole, ADMINS } from '$lib/server/auth/access';
import { models } from '$lib/server/models';
import { balanceInput, balancePatch, createBalance, listBalances, updateBalance } from '$lib/server/registry/balances';
import { whoFrom } from '$lib/server/registry/common';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ locals }) => ({
	balances: await listBalances(models()),
	canManage: hasRole(locals.user!.role, ADMINS)
});

const num = (v: FormDataEntryValue | null) => (v === null || String(v).trim() === '' ? undefined : Number(String(v).trim()));
/** A capacity typed in grams, as whole µg (a capacity needs no finer step); empty: not recorded. */
const gramsToUg = (v: FormDataEntryValue | null) => {
	const g = num(v);
	return g === undefined ? undefined : Number.isFinite(g) ? Math.round(g * 1e6) : g;
};

async function attempt(fn: () => Promise<unknown>, form: string, values: Record<string, unknown>) {
	try {
		await fn();
		return { form, ok: true as const };
	} catch (e) {
		if (e instanceof ApiProblem) return fail(e.status, { form, message: e.message, fields: e.fields ?? {}, values });
		throw e;
	}
}

export const actions: Actions = {
	create: async ({ request, locals }) => {
		const f = await request.formData();
		const values = {
			name: String(f.get('name') ?? ''), model: String(f.get('model') ?? ''), location: String(f.get('location') ?? ''),
			readabilityUg: num(f.get('readabilityUg')), repeatabilityUg: num(f.get('repeatabilityUg')), calibrationDue: String(f.get('calibrationDue') ?? ''),
			capacityUg: gramsToUg(f.get('capacityG'))
		};
		const parsed = balanceInput.safeParse(values);
		if (!parsed.success) {
			const fields = zodFields(parsed.error.issues);
			// the form asks for grams: its own words for the field it shows
			if (fields.capacityUg) {
				fields.capacityG = 'must be a number of grams above 0, e.g. 220 or 2.1';
				delete fields.capacityUg;
			}
			return fail(422, { form: 'create', message: 'Check the marked fields.', fields, values: { ...values, capacityG: String(f.get('capacityG') ?? '') } });
		}
		return attempt(() => createBalance(models(), whoFrom(locals.user!), parsed.data), 'create', values);
	},
	calibrate: async ({ request, locals }) => {
		const f = await request.formData();
		const id = String(f.get('id') ?? '');
		const values = { calibrationDue: String(f.get('calibrationDue') ?? '') };
		const parsed = balancePatch.safeParse(values);
		if (!parsed.success) return fail(422, { form: `calibrate-${id}`, message: 'Enter the new due date as YYYY-MM-DD.', fields: zodFields(parsed.error.issues), values });
		return attempt(() => updateBalance(models(), whoFrom(locals.user!), id, parsed.data), `calibrate-${id}`, values);
	}
};
