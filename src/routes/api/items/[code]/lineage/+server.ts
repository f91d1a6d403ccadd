import { z } from 'zod';
import { endpoint, readQuery } from '$lib/server/api';
import { models } from '$lib/server/models';
import { whoFrom } from '$lib/server/registry/common';
import { lineageJson } from '$lib/server/registry/lineage';
import type { RequestHandler } from './$types';

const query = z.strictObject({
	depth: z.coerce.number({ error: 'must be a number of levels' }).int('must be a whole number of levels').min(1, 'must be at least 1').max(1000, 'must be at most 1000').optional()
});

export const GET: RequestHandler = endpoint(async ({ params, url, locals }) => {
	const { depth } = readQuery(url, query);
	const body = await lineageJson(models(), whoFrom(locals.user!), params.code, depth ?? null);
	return new Response(body, { headers: { 'content-type': 'application/json' } });
});
