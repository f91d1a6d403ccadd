import { importTemplate } from '$lib/server/registry/import';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = () =>
	new Response(importTemplate(), {
		headers: { 'content-type': 'text/csv; charset=utf-8', 'content-disposition': 'attachment; filename="regolog-specimen-import-template.csv"' }
	});
