import { json } from '@sveltejs/kit';
import { endpoint, readJson } from '$lib/server/api';
import { models } from '$lib/server/models';
import { getRequest, declineRequest, declineInput } from '$lib/server/custody/requests';
import type { RequestHandler } from './$types';

export const POST: RequestHandler = endpoint(async (event) => {
	const sq = models();
	const result = await declineRequest(sq, event.locals.user!, event.params.id, await readJson(event, declineInput));
	return json({ result: result ?? null, ...(await getRequest(sq, event.locals.user!, event.params.id)) });
});
