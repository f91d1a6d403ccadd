import { error } from '@sveltejs/kit';
import { ApiProblem } from '$lib/server/api';
import { hasRole, CURATORS, STAFF, UPLOADERS } from '$lib/server/auth/access';
import { models } from '$lib/server/models';
import { findItem, whoFrom } from '$lib/server/registry/common';
import { getItem } from '$lib/server/registry/items';
import { ledger } from '$lib/server/registry/lineage';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ params, locals }) => {
	const who = whoFrom(locals.user!);
	try {
		// the item is looked up once (its visibility checked), then its budget and ledger at once
		const row = await findItem(models(), who, params.code);
		const [item, book] = await Promise.all([getItem(models(), who, params.code, row), ledger(models(), who, params.code, row)]);
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
