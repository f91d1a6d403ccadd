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
		const [rules] = await sq.query<CollectionRules & { allowed_atmospheres: string[] }>('SELECT id, prefix, loss_tolerance_ug, loss_tolerance_fraction, allowed_atmospheres FROM collections WHERE prefix = :p', {
			type: QueryTypes.SELECT, replacements: { p: item.collection }
		});
		const balances = (await listBalances(sq)).filter((b) => b.usable);
		// the cautions follow the atmospheres the collection allows its work in, and a split cuts
		return { item, tolerance: toleranceOf(rules), balances, atmospheres: rules.allowed_atmospheres ?? [] };
	} catch (e) {
		if (e instanceof ApiProblem) error(e.status, { code: e.code, message: e.message });
		throw e;
	}
};
