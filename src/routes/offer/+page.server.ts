import { error } from '@sveltejs/kit';
import { ApiProblem, readQuery } from '$lib/server/api';
import { models } from '$lib/server/models';
import { getOffer, offerQuery } from '$lib/server/offer/offer';
import type { PageServerLoad } from './$types';

/** The first page of the offer rendered on the server; the page fetches the rest from /api/offer. */
export const load: PageServerLoad = async ({ url, locals }) => {
	try {
		return { offer: await getOffer(models(), readQuery(url, offerQuery)), canAsk: locals.user!.role === 'lab_member' };
	} catch (e) {
		if (e instanceof ApiProblem) error(e.status, { code: e.code, message: e.message });
		throw e;
	}
};
