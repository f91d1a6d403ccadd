import { models } from '$lib/server/models';
import { worklist } from '$lib/server/custody/worklist';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ locals }) => ({
	work: locals.user && locals.user.role !== 'auditor' ? await worklist(models(), locals.user) : null
});
