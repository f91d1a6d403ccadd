import { json } from '@sveltejs/kit';
import { endpoint, readQuery } from '$lib/server/api';
import { db } from '$lib/server/db';
import { historyCsv, historyPdf, historyQuery, itemHistory } from '$lib/server/handling/history';
import { whoFrom } from '$lib/server/registry/common';
import type { RequestHandler } from './$types';
import { codeForFileName } from '$lib/domain/codes';

/** An item's chronological history (lineage, custody, handling, weighings, blanks); `format=csv|pdf` for an export. */
export const GET: RequestHandler = endpoint(async ({ params, url, locals }) => {
	const q = readQuery(url, historyQuery);
	const h = await itemHistory(db(), whoFrom(locals.user!), params.code, q);
	const name = `${codeForFileName(h.code)}-history`;
	if (q.format === 'csv') {
		return new Response(historyCsv(h), { headers: { 'content-type': 'text/csv; charset=utf-8', 'content-disposition': `attachment; filename="${name}.csv"` } });
	}
	if (q.format === 'pdf') {
		const filters = [q.from && `from ${q.from}`, q.to && `to ${q.to}`, q.actor && `actor “${q.actor}”`, q.kind && `kind ${q.kind}`].filter(Boolean).join(', ');
		const pdf = await historyPdf(h, filters);
		return new Response(new Uint8Array(pdf), { headers: { 'content-type': 'application/pdf', 'content-disposition': `attachment; filename="${name}.pdf"` } });
	}
	return json(h);
});
