import { hasRole, UPLOADERS } from '$lib/server/auth/access';
import { models } from '$lib/server/models';
import { whoFrom } from '$lib/server/registry/common';
import { listReports } from '$lib/server/blank-reports/service';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ locals }) => ({
	reports: await listReports(models(), whoFrom(locals.user!)),
	canUpload: hasRole(locals.user!.role, UPLOADERS)
});
