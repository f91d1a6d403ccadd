import { error } from '@sveltejs/kit';
import { ApiProblem, pathId } from '$lib/server/api';
import { models } from '$lib/server/models';
import { whoFrom } from '$lib/server/registry/common';
import { getReport } from '$lib/server/blank-reports/service';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ params, locals }) => {
	try {
		return { report: await getReport(models(), whoFrom(locals.user!), pathId(params.id, 'blank-control report')) };
	} catch (e) {
		if (e instanceof ApiProblem) error(e.status, { code: e.code, message: e.message });
		throw e;
	}
};
