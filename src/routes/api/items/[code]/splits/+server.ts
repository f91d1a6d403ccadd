import { json } from '@sveltejs/kit';
import { endpoint, readJson } from '$lib/server/api';
import { models } from '$lib/server/models';
import { whoFrom } from '$lib/server/registry/common';
import { splitInput, splitItem } from '$lib/server/registry/split';
import type { RequestHandler } from './$types';

export const POST: RequestHandler = endpoint(async (event) => {
	const input = await readJson(event, splitInput);
	const result = await splitItem(models(), whoFrom(event.locals.user!), event.params.code, input);
	return json(result, { status: 201 });
});
