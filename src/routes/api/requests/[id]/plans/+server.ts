import { json } from '@sveltejs/kit';
import { endpoint, readQuery } from '$lib/server/api';
import { models } from '$lib/server/models';
import { plansQuery, requestPlans } from '$lib/server/offer/plans';
import type { Criterion } from '$lib/domain/planner';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint(async ({ url, params, locals }) => {
	const q = readQuery(url, plansQuery);
	return json(await requestPlans(models(), locals.user!, params.id, q.order as Criterion[] | undefined));
});
