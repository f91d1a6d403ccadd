import { json } from '@sveltejs/kit';
import { endpoint, readJson } from '$lib/server/api';
import { models } from '$lib/server/models';
import { whoFrom } from '$lib/server/registry/common';
import { rulesInput, updateRules } from '$lib/server/registry/collections';
import type { RequestHandler } from './$types';

export const PATCH: RequestHandler = endpoint(async (event) => {
	const input = await readJson(event, rulesInput);
	return json({ rules: await updateRules(models(), whoFrom(event.locals.user!), event.params.prefix, input) });
});
