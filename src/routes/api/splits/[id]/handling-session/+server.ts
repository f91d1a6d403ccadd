import { json } from '@sveltejs/kit';
import { endpoint, pathId, readJson } from '$lib/server/api';
import { db } from '$lib/server/db';
import { attachInput, attachSession } from '$lib/server/handling/split-sessions';
import { whoFrom } from '$lib/server/registry/common';
import type { RequestHandler } from './$types';

/** Attaches the handling session a split happened in, for a split recorded without one. */
export const POST: RequestHandler = endpoint(async (event) => {
	const id = pathId(event.params.id, 'split');
	const input = await readJson(event, attachInput);
	return json({ attached: await attachSession(db(), whoFrom(event.locals.user!), id, input) });
});
