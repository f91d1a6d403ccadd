import { db } from '$lib/server/db';
import { hasRole, CURATORS } from '$lib/server/auth/access';
import { listSessions } from '$lib/server/handling/sessions';
import { whoFrom } from '$lib/server/registry/common';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ url, locals }) => ({
	sessions: await listSessions(db(), whoFrom(locals.user!), { limit: 200 }),
	recorded: url.searchParams.get('recorded'),
	canRecord: hasRole(locals.user!.role, CURATORS)
});
