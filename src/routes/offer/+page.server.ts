import { error } from '@sveltejs/kit';
import { ApiProblem, readQuery } from '$lib/server/api';
import { models } from '$lib/server/models';
import { getOffer, offerQuery } from '$lib/server/offer/offer';
import type { PageServerLoad } from './$types';

/** Rows rendered with the page; the page fetches more (and every change of filter) from /api/offer. */
const FIRST_PAGE = 25;

/** The first page of the offer rendered on the server. */
export const load: PageServerLoad = async ({ url, locals }) => {
	try {
		const q = readQuery(url, offerQuery);
		return { offer: await getOffer(models(), { ...q, limit: url.searchParams.has('limit') ? q.limit : FIRST_PAGE }), canAsk: locals.user!.role === 'lab_member' };
	} catch (e) {
		if (e instanceof ApiProblem) error(e.status, { code: e.code, message: e.message });
		throw e;
	}
};
