import { models } from '$lib/server/models';
import { collectionSummaries } from '$lib/server/registry/collections';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async () => ({ collections: await collectionSummaries(models()) });
