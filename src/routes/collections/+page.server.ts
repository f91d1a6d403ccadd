import { fail } from '@sveltejs/kit';
import { ApiProblem, zodFields } from '$lib/server/api';
import { hasRole, ADMINS } from '$lib/server/auth/access';
import { models } from '$lib/server/models';
import { collectionSummaries, rulesInput, updateRules } from '$lib/server/registry/collections';
import { whoFrom } from '$lib/server/registry/common';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ locals }) => ({
	collections: await collectionSummaries(models()),
	canManage: hasRole(locals.user!.role, ADMINS)
});

const list = (v: FormDataEntryValue | null) =>
	String(v ?? '')
		.split(',')
		.map((s) => s.trim())
		.filter(Boolean);
const number = (v: FormDataEntryValue | null) => (String(v ?? '').trim() === '' ? undefined : Number(String(v).trim()));

export const actions: Actions = {
	rules: async ({ request, locals }) => {
		const f = await request.formData();
		const prefix = String(f.get('prefix') ?? '');
		const tolerance = number(f.get('tolerance'));
		const percent = number(f.get('reservePercent'));
		const air = String(f.get('maxAir') ?? '').trim();
		const candidate = {
			allowedAtmospheres: list(f.get('atmospheres')),
			allowedContactMaterials: list(f.get('materials')),
			maxAirExposureMin: air === '' ? null : Number(air),
			...(percent === undefined ? {} : { reserveFraction: Math.round(percent * 1000) / 100000 }),
			...(tolerance === undefined ? {} : f.get('toleranceUnit') === 'percent' ? { lossToleranceFraction: tolerance / 100 } : { lossToleranceUg: tolerance })
		};
		const parsed = rulesInput.safeParse(candidate);
		if (!parsed.success) return fail(422, { prefix, message: 'Check the marked rules.', fields: zodFields(parsed.error.issues) });
		try {
			await updateRules(models(), whoFrom(locals.user!), prefix, parsed.data);
		} catch (e) {
			if (e instanceof ApiProblem) return fail(e.status, { prefix, message: e.message, fields: e.fields ?? {} });
			throw e;
		}
		return { prefix, saved: true };
	}
};
