import { inviteSchema, inviteUser, updateUser, userPatchSchema } from '$lib/server/accounts';
import { listLabs, listUsers } from '$lib/server/directory';
import { formAction, formValues, parseForm } from '$lib/server/forms';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ locals }) => ({
	users: await listUsers(),
	labs: await listLabs(locals.user!)
});

export const actions: Actions = {
	invite: async ({ request, locals }) => {
		const values = formValues(await request.formData());
		const parsed = parseForm({ ...values, labId: values.labId ? values.labId : null }, inviteSchema);
		if (!parsed.ok) return parsed.failure;
		const r = await formAction(values, () => inviteUser(locals.user!, parsed.data));
		if (!r.ok) return r.failure;
		return { invited: parsed.data.email };
	},
	update: async ({ request, locals }) => {
		const values = formValues(await request.formData());
		const patch: Record<string, unknown> = {};
		if (values.role) patch.role = values.role;
		if ('labId' in values) patch.labId = values.labId || null;
		if (values.active) patch.active = values.active === 'true';
		const parsed = parseForm(patch, userPatchSchema);
		if (!parsed.ok) return parsed.failure;
		const r = await formAction(values, () => updateUser(locals.user!, String(values.id ?? ''), parsed.data));
		if (!r.ok) return r.failure;
		return { updated: String(values.id) };
	}
};
