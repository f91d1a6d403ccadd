import { json } from '@sveltejs/kit';
import { endpoint } from '$lib/server/api';
import { db } from '$lib/server/db';
import { itemExposure } from '$lib/server/handling/exposure';
import { whoFrom } from '$lib/server/registry/common';
import type { RequestHandler } from './$types';

/** Exposure minutes per atmosphere, rule violations, blank coverage and lineage flags (DESIGN §3.5–3.6). */
export const GET: RequestHandler = endpoint(async ({ params, locals }) => {
	return json(await itemExposure(db(), whoFrom(locals.user!), params.code));
});
