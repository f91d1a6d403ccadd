import { redirect } from '@sveltejs/kit';
import { signOut } from '$lib/server/auth/session';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async () => redirect(303, '/');

export const actions: Actions = {
	default: async (event) => {
		await signOut(event);
		redirect(303, '/sign-in');
	}
};
