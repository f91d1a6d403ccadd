import { json } from '@sveltejs/kit';
import { endpoint } from '$lib/server/api';
import { models } from '$lib/server/models';
import { getRequest, withdrawRequest } from '$lib/server/custody/requests';
import type { RequestHandler } from './$types';

export const POST: RequestHandler = endpoint(async ({ params, locals }) => {
	const sq = models();
	await withdrawRequest(sq, locals.user!, params.id);
	return json(await getRequest(sq, locals.user!, params.id));
});
