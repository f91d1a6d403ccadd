import { json } from '@sveltejs/kit';
import { endpoint } from '$lib/server/api';
import { models } from '$lib/server/models';
import { whoFrom } from '$lib/server/registry/common';
import { ledger } from '$lib/server/registry/lineage';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint(async ({ params, locals }) => json(await ledger(models(), whoFrom(locals.user!), params.code)));
