import { json } from '@sveltejs/kit';
import { endpoint, readJson } from '$lib/server/api';
import { models } from '$lib/server/models';
import { getRequest } from '$lib/server/custody/requests';
import { submitUsage, usageInput } from '$lib/server/custody/usage';
import type { RequestHandler } from './$types';

export const POST: RequestHandler = endpoint(async (event) => {
	const sq = models();
	const result = await submitUsage(sq, event.locals.user!, event.params.id, await readJson(event, usageInput));
	return json({ result, ...(await getRequest(sq, event.locals.user!, event.params.id)) }, { status: 201 });
});
