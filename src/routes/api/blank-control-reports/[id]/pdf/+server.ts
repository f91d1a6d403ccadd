import { endpoint, pathId } from '$lib/server/api';
import { models } from '$lib/server/models';
import { whoFrom } from '$lib/server/registry/common';
import { getReport } from '$lib/server/blank-reports/service';
import { reportPdf } from '$lib/server/blank-reports/pdf';
import { attachmentHeader } from '$lib/server/documents/download';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint(async ({ params, locals }) => {
	const report = await getReport(models(), whoFrom(locals.user!), pathId(params.id, 'blank-control report'));
	const pdf = await reportPdf(report);
	return new Response(new Uint8Array(pdf), {
		headers: { 'content-type': 'application/pdf', 'content-length': String(pdf.length), 'content-disposition': attachmentHeader(`blank-control-${report.id.slice(0, 8)}.pdf`) }
	});
});
