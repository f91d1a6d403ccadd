import { navFor } from '$lib/nav';
import { facilityNameForPages } from '$lib/server/facility';
import type { LayoutServerLoad } from './$types';

export const load: LayoutServerLoad = async ({ locals }) => {
	return {
		user: locals.user,
		nav: navFor(locals.user?.role ?? null),
		facility: await facilityNameForPages()
	};
};
