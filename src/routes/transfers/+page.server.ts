import { models } from '$lib/server/models';
import { listTransfers } from '$lib/server/custody/transfers';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ locals }) => ({ transfers: await listTransfers(models(), locals.user!) });
