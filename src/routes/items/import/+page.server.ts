import { IMPORT_COLUMNS, MAX_IMPORT_ROWS } from '$lib/server/registry/import';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async () => ({ columns: IMPORT_COLUMNS.map((c) => ({ ...c })), maxRows: MAX_IMPORT_ROWS });
