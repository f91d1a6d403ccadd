import { models } from '$lib/server/models';
import { listRequests, listRequestsQuery } from '$lib/server/custody/requests';
import { readQuery } from '$lib/server/api';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ locals, url }) => {
	let q = {};
	try {
		q = readQuery(url, listRequestsQuery);
	} catch {
		q = {};
	}
	return { requests: await listRequests(models(), locals.user!, q), filter: Object.fromEntries(url.searchParams) };
};
