import { error } from '@sveltejs/kit';
import { QueryTypes } from 'sequelize';
import { ApiProblem } from '$lib/server/api';
import { models } from '$lib/server/models';
import { listBalances } from '$lib/server/registry/balances';
import { whoFrom } from '$lib/server/registry/common';
import { getItem } from '$lib/server/registry/items';
import { toleranceOf, type CollectionRules } from '$lib/server/registry/split';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ params, locals }) => {
	const sq = models();
	try {
		const item = await getItem(sq, whoFrom(locals.user!), params.code);
		const [rules] = await sq.query<CollectionRules>('SELECT id, prefix, loss_tolerance_ug, loss_tolerance_fraction FROM collections WHERE prefix = :p', {
			type: QueryTypes.SELECT, replacements: { p: item.collection }
		});
		const balances = (await listBalances(sq)).filter((b) => b.usable);
		return { item, tolerance: toleranceOf(rules), balances };
	} catch (e) {
		if (e instanceof ApiProblem) error(e.status, { code: e.code, message: e.message });
		throw e;
	}
};
