import { json } from '@sveltejs/kit';
import { endpoint, pathId } from '$lib/server/api';
import { models } from '$lib/server/models';
import { whoFrom } from '$lib/server/registry/common';
import { documentView, findDocument } from '$lib/server/documents/store';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint(async ({ params, locals }) => {
	const d = await findDocument(models(), whoFrom(locals.user!), pathId(params.id, 'document'));
	return json({ document: documentView(d) });
});
