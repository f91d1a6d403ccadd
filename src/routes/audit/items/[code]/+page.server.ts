import { error } from '@sveltejs/kit';
import { ApiProblem } from '$lib/server/api';
import { hasRole, AUDITORS } from '$lib/server/auth/access';
import { db } from '$lib/server/db';
import { historyQuery, itemHistory } from '$lib/server/handling/history';
import { whoFrom } from '$lib/server/registry/common';
import { lineageJson } from '$lib/server/registry/lineage';
import { readQuery } from '$lib/server/api';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ params, url, locals }) => {
	const who = whoFrom(locals.user!);
	try {
		const q = readQuery(url, historyQuery.omit({ format: true }));
		const [history, tree] = await Promise.all([itemHistory(db(), who, params.code, q), lineageJson(db(), who, params.code, 1).then((text) => JSON.parse(text))]);
		return { history, lineage: tree, filters: q, canVerify: hasRole(locals.user!.role, AUDITORS) };
	} catch (e) {
		if (e instanceof ApiProblem) error(e.status, { code: e.code, message: e.message });
		throw e;
	}
};
