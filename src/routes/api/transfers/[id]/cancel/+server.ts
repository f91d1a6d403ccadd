import { json } from '@sveltejs/kit';
import { endpoint } from '$lib/server/api';
import { models } from '$lib/server/models';
import { cancelTransfer, getTransfer } from '$lib/server/custody/transfers';
import type { RequestHandler } from './$types';

export const POST: RequestHandler = endpoint(async ({ params, locals }) => {
	const sq = models();
	await cancelTransfer(sq, locals.user!, params.id);
	return json(await getTransfer(sq, locals.user!, params.id));
});
