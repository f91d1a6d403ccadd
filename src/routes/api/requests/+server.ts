import { json } from '@sveltejs/kit';
import { endpoint, readJson, readQuery } from '$lib/server/api';
import { models } from '$lib/server/models';
import { createRequest, getRequest, listRequests, listRequestsQuery, requestInput } from '$lib/server/custody/requests';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint(async ({ url, locals }) => json({ requests: await listRequests(models(), locals.user!, readQuery(url, listRequestsQuery)) }));

export const POST: RequestHandler = endpoint(async (event) => {
	const sq = models();
	const id = await createRequest(sq, event.locals.user!, await readJson(event, requestInput));
	return json(await getRequest(sq, event.locals.user!, id), { status: 201 });
});
