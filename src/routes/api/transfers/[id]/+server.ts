import { json } from '@sveltejs/kit';
import { endpoint } from '$lib/server/api';
import { models } from '$lib/server/models';
import { getTransfer } from '$lib/server/custody/transfers';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint(async ({ params, locals }) => json(await getTransfer(models(), locals.user!, params.id)));
