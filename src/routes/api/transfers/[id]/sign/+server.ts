import { json } from '@sveltejs/kit';
import { endpoint, readJson } from '$lib/server/api';
import { models } from '$lib/server/models';
import { getTransfer, signInput, signTransfer } from '$lib/server/custody/transfers';
import type { RequestHandler } from './$types';

export const POST: RequestHandler = endpoint(async (event) => {
	const sq = models();
	const signature = await signTransfer(sq, event.locals.user!, event.params.id, await readJson(event, signInput));
	return json({ signature, ...(await getTransfer(sq, event.locals.user!, event.params.id)) }, { status: 201 });
});
