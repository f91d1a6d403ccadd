import { json } from '@sveltejs/kit';
import { endpoint, readJson, readQuery } from '$lib/server/api';
import { models } from '$lib/server/models';
import { whoFrom } from '$lib/server/registry/common';
import { listItems, listQuery, registerInput, registerSpecimen } from '$lib/server/registry/items';
import type { RequestHandler } from './$types';
import { itemPath } from '$lib/domain/codes';

export const GET: RequestHandler = endpoint(async ({ url, locals }) => json(await listItems(models(), whoFrom(locals.user!), readQuery(url, listQuery))));

export const POST: RequestHandler = endpoint(async (event) => {
	const input = await readJson(event, registerInput);
	const item = await registerSpecimen(models(), whoFrom(event.locals.user!), input);
	return json({ item }, { status: 201, headers: { location: `/api/items/${itemPath(item.code)}` } });
});
