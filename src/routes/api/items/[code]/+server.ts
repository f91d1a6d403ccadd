import { json } from '@sveltejs/kit';
import { endpoint } from '$lib/server/api';
import { models } from '$lib/server/models';
import { whoFrom } from '$lib/server/registry/common';
import { getItem } from '$lib/server/registry/items';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint(async ({ params, locals }) => json({ item: await getItem(models(), whoFrom(locals.user!), params.code) }));
