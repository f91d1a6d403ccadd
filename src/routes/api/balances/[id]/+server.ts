import { json } from '@sveltejs/kit';
import { endpoint, readJson } from '$lib/server/api';
import { models } from '$lib/server/models';
import { whoFrom } from '$lib/server/registry/common';
import { balancePatch, updateBalance } from '$lib/server/registry/balances';
import type { RequestHandler } from './$types';

export const PATCH: RequestHandler = endpoint(async (event) => {
	const input = await readJson(event, balancePatch);
	return json({ balance: await updateBalance(models(), whoFrom(event.locals.user!), event.params.id, input) });
});
