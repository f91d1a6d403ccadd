import { fail, redirect } from '@sveltejs/kit';
import { signIn, signInSchema } from '$lib/server/auth/service';
import { clientMeta, safeNext } from '$lib/server/auth/request';
import { zodFields } from '$lib/server/api';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ locals, url }) => {
	if (locals.user) redirect(303, safeNext(url.searchParams.get('next')));
	return { next: safeNext(url.searchParams.get('next')) };
};

export const actions: Actions = {
	default: async (event) => {
		const form = await event.request.formData();
		const email = String(form.get('email') ?? '');
		const parsed = signInSchema.safeParse({ email, password: String(form.get('password') ?? '') });
		if (!parsed.success) return fail(400, { email, fields: zodFields(parsed.error.issues), message: null as string | null });
		const r = await signIn(parsed.data.email, parsed.data.password, clientMeta(event));
		if (!r.ok) return fail(r.status, { email, fields: {} as Record<string, string>, message: r.message });
		event.cookies.set(r.cookie.name, r.cookie.value, { path: '.', ...r.cookie.attributes });
		redirect(303, safeNext(String(form.get('next') ?? '/')));
	}
};
