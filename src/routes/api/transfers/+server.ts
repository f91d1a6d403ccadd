import { json } from '@sveltejs/kit';
import { endpoint, readJson, readQuery } from '$lib/server/api';
import { models } from '$lib/server/models';
import { getTransfer, listTransfers, listTransfersQuery, prepareInput, prepareTransfer } from '$lib/server/custody/transfers';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint(async ({ url, locals }) => json({ transfers: await listTransfers(models(), locals.user!, readQuery(url, listTransfersQuery)) }));

export const POST: RequestHandler = endpoint(async (event) => {
	const sq = models();
	const id = await prepareTransfer(sq, event.locals.user!, await readJson(event, prepareInput));
	return json(await getTransfer(sq, event.locals.user!, id), { status: 201 });
});
