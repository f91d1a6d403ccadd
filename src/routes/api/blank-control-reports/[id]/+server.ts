import { json } from '@sveltejs/kit';
import { endpoint, pathId } from '$lib/server/api';
import { models } from '$lib/server/models';
import { whoFrom } from '$lib/server/registry/common';
import { getReport } from '$lib/server/blank-reports/service';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint(async ({ params, locals }) => json({ report: await getReport(models(), whoFrom(locals.user!), pathId(params.id, 'blank-control report')) }));
