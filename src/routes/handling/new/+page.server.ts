import { redirect } from '@sveltejs/kit';
import { QueryTypes } from 'sequelize';
import { db } from '$lib/server/db';
import { formAction, formValues } from '$lib/server/forms';
import { recordSession, sessionInput } from '$lib/server/handling/record';
import { parseForm } from '$lib/server/forms';
import { whoFrom } from '$lib/server/registry/common';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ url, locals }) => {
	const sq = db();
	const [catalogue, operators] = await Promise.all([
		sq.query<{ prefix: string; name: string; kind: string; material: string; allowed: boolean }>(
			`SELECT c.prefix, k.name, k.kind, k.material,
			        EXISTS (SELECT 1 FROM unnest(c.allowed_contact_materials) m WHERE lower(m) = lower(k.material)) AS allowed
			 FROM contact_catalogue k JOIN collections c ON c.id = k.collection_id ORDER BY c.prefix, k.kind, k.name`,
			{ type: QueryTypes.SELECT }
		),
		sq.query<{ email: string; name: string }>(`SELECT email, name FROM users WHERE active AND role IN ('curator', 'admin') ORDER BY name`, { type: QueryTypes.SELECT })
	]);
	return { catalogue, operators, me: locals.user!.email, item: url.searchParams.get('item') ?? '' };
};

const list = (text: string | undefined) => (text ?? '').split(/[\s,;]+/).map((s) => s.trim()).filter(Boolean);
const num = (text: string | undefined) => (text === undefined || text.trim() === '' ? null : Number(text.replace(',', '.')));
/** datetime-local gives "YYYY-MM-DDTHH:MM" without a zone; the form asks for UTC. */
const utc = (text: string | undefined) => (text && /^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}(:\d{2})?$/.test(text) ? `${text.length === 16 ? text + ':00' : text}Z` : (text ?? ''));

export const actions: Actions = {
	default: async ({ request, locals }) => {
		const data = await request.formData();
		const values = formValues(data);
		const input = {
			items: list(values.items),
			atmosphere: values.atmosphere ?? '',
			start: utc(values.start),
			end: utc(values.end),
			temperatureC: num(values.temperatureC),
			humidityPct: num(values.humidityPct),
			operator: values.operator || undefined,
			contacts: data.getAll('contacts').map(String),
			blanks: list(values.blanks),
			purpose: values.purpose ?? '',
			notes: values.notes || undefined
		};
		const parsed = parseForm(input, sessionInput);
		if (!parsed.ok) return parsed.failure;
		const r = await formAction(values, () => recordSession(db(), whoFrom(locals.user!), parsed.data));
		if (!r.ok) return r.failure;
		redirect(303, `/handling?recorded=${r.value.id}`);
	}
};
