import { json } from '@sveltejs/kit';
import { endpoint, readJson } from '$lib/server/api';
import { models } from '$lib/server/models';
import { whoFrom } from '$lib/server/registry/common';
import { balanceInput, createBalance, listBalances } from '$lib/server/registry/balances';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint(async () => json({ balances: await listBalances(models()) }));

export const POST: RequestHandler = endpoint(async (event) => {
	const input = await readJson(event, balanceInput);
	return json({ balance: await createBalance(models(), whoFrom(event.locals.user!), input) }, { status: 201 });
});
