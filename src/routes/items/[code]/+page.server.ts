import { error } from '@sveltejs/kit';
import { ApiProblem } from '$lib/server/api';
import { hasRole, CURATORS, STAFF, UPLOADERS } from '$lib/server/auth/access';
import { models } from '$lib/server/models';
import { whoFrom } from '$lib/server/registry/common';
import { getItem } from '$lib/server/registry/items';
import { ledger } from '$lib/server/registry/lineage';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ params, locals }) => {
	const who = whoFrom(locals.user!);
	try {
		const [item, book] = await Promise.all([getItem(models(), who, params.code), ledger(models(), who, params.code)]);
		return {
			item,
			ledger: book,
			canSplit: hasRole(locals.user!.role, CURATORS) && item.state === 'stored' && item.holder.kind === 'facility' && item.massUg > 0,
			canAttach: hasRole(locals.user!.role, UPLOADERS),
			canRecordHandling: hasRole(locals.user!.role, CURATORS),
			canAudit: hasRole(locals.user!.role, STAFF)
		};
	} catch (e) {
		if (e instanceof ApiProblem) error(e.status, { code: e.code, message: e.message });
		throw e;
	}
};
