import { templateCsv } from '$lib/domain/blank-report';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = () =>
	new Response(templateCsv(), {
		headers: { 'content-type': 'text/csv; charset=utf-8', 'content-disposition': 'attachment; filename="regolog-blank-control-template.csv"' }
	});
