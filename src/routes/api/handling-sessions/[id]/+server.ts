import { json } from '@sveltejs/kit';
import { endpoint, pathId } from '$lib/server/api';
import { db } from '$lib/server/db';
import { getSession } from '$lib/server/handling/sessions';
import { whoFrom } from '$lib/server/registry/common';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint(async ({ params, locals }) => {
	return json({ session: await getSession(db(), whoFrom(locals.user!), pathId(params.id, 'handling session')) });
});
