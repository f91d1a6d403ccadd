import { endpoint, readQuery } from '$lib/server/api';
import { models } from '$lib/server/models';
import { whoFrom } from '$lib/server/registry/common';
import { exportItemsCsv } from '$lib/server/registry/export';
import { listQuery } from '$lib/server/registry/items';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint(async ({ url, locals }) => {
	const q = readQuery(url, listQuery.omit({ after: true, limit: true }));
	const csv = await exportItemsCsv(models(), whoFrom(locals.user!), q);
	const stamp = new Date().toISOString().slice(0, 10);
	return new Response(csv, {
		headers: { 'content-type': 'text/csv; charset=utf-8', 'content-disposition': `attachment; filename="regolog-items-${stamp}.csv"` }
	});
});
