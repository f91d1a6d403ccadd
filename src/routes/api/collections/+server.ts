import { json } from '@sveltejs/kit';
import { endpoint } from '$lib/server/api';
import { models } from '$lib/server/models';
import { collectionSummaries } from '$lib/server/registry/collections';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint(async () => json({ collections: await collectionSummaries(models()) }));
