import { json } from '@sveltejs/kit';
import { endpoint } from '$lib/server/api';
import { models } from '$lib/server/models';
import { whoFrom } from '$lib/server/registry/common';
import { createReport, listReports, readLimited, settingsFromQuery } from '$lib/server/blank-reports/service';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint(async ({ locals }) => json({ reports: await listReports(models(), whoFrom(locals.user!)) }));

/**
 * Uploads a blank-control table (the CSV as the raw body) with ?title= and ?name= (the file name),
 * and optionally the report's settings ?adjust=holm|bh|none&limits=currie|classical&minBlanks=3.
 */
export const POST: RequestHandler = endpoint(async ({ url, request, locals }) => {
	const length = request.headers.get('content-length');
	const bytes = await readLimited(request.body, length === null ? null : Number(length));
	// after the body is read, so that a refusal reaches the client
	const settings = settingsFromQuery(url.searchParams);
	const report = await createReport(models(), whoFrom(locals.user!), {
		title: url.searchParams.get('title') ?? '',
		fileName: url.searchParams.get('name') ?? 'blank-control.csv',
		contentType: request.headers.get('content-type'),
		bytes,
		settings
	});
	return json({ report }, { status: 201 });
});
