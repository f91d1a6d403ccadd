import { json } from '@sveltejs/kit';
import { endpoint, readJson } from '$lib/server/api';
import { models } from '$lib/server/models';
import { getRequest, grantRequest, grantInput } from '$lib/server/custody/requests';
import type { RequestHandler } from './$types';

export const POST: RequestHandler = endpoint(async (event) => {
	const sq = models();
	const result = await grantRequest(sq, event.locals.user!, event.params.id, await readJson(event, grantInput));
	return json({ result: result ?? null, ...(await getRequest(sq, event.locals.user!, event.params.id)) });
});
