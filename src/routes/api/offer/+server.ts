import { json } from '@sveltejs/kit';
import { endpoint, readQuery } from '$lib/server/api';
import { models } from '$lib/server/models';
import { getOffer, offerQuery } from '$lib/server/offer/offer';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint(async ({ url }) => json(await getOffer(models(), readQuery(url, offerQuery))));
