import { json } from '@sveltejs/kit';
import { endpoint, readJson } from '$lib/server/api';
import { models } from '$lib/server/models';
import { getRequest, requestInput, updateDraft } from '$lib/server/custody/requests';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint(async ({ params, locals }) => json(await getRequest(models(), locals.user!, params.id)));

export const PUT: RequestHandler = endpoint(async (event) => {
	const sq = models();
	await updateDraft(sq, event.locals.user!, event.params.id, await readJson(event, requestInput));
	return json(await getRequest(sq, event.locals.user!, event.params.id));
});
