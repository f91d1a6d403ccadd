import { json } from '@sveltejs/kit';
import { ApiProblem, endpoint } from '$lib/server/api';
import { models } from '$lib/server/models';
import { whoFrom } from '$lib/server/registry/common';
import { findSubject, subjectType } from '$lib/server/documents/subjects';
import { documentView, listDocuments, storeDocument } from '$lib/server/documents/store';
import { DOCUMENT_KINDS, type DocumentKind } from '$lib/server/documents/types';
import { listReports } from '$lib/server/blank-reports/service';
import type { RequestHandler } from './$types';

/** The documents of one subject (?subject=item&ref=TRN-00011/K), and for items and blanks the blank-control reports that name them. */
export const GET: RequestHandler = endpoint(async ({ url, locals }) => {
	const sq = models();
	const who = whoFrom(locals.user!);
	const subject = await findSubject(sq, who, subjectType(url.searchParams.get('subject')), url.searchParams.get('ref'));
	const documents = (await listDocuments(sq, who, subject)).map(documentView);
	const reports = subject.type === 'item' || subject.type === 'blank' ? await listReports(sq, who, { itemId: subject.id }) : [];
	return json({ subject: { type: subject.type, label: subject.label, href: subject.href }, documents, reports });
});

/**
 * Uploads one document as the raw request body (the file's own Content-Type), attached to
 * ?subject=…&ref=…, with ?name= (the original file name), ?kind= and optional ?description=.
 */
export const POST: RequestHandler = endpoint(async ({ url, request, locals }) => {
	const sq = models();
	const who = whoFrom(locals.user!);
	const kind = url.searchParams.get('kind') ?? 'other';
	if (!(DOCUMENT_KINDS as readonly string[]).includes(kind) || kind === 'blank_control_report') {
		throw new ApiProblem(400, 'invalid_query', `kind must be one of ${DOCUMENT_KINDS.filter((k) => k !== 'blank_control_report').join(', ')}; blank-control tables go to /api/blank-control-reports.`, { kind: 'is not a document kind' });
	}
	const subject = await findSubject(sq, who, subjectType(url.searchParams.get('subject')), url.searchParams.get('ref'));
	if (!request.body) throw new ApiProblem(422, 'empty_file', 'The file is empty; nothing was saved.', { file: 'is empty' });
	const length = request.headers.get('content-length');
	const row = await storeDocument(sq, who, {
		subject,
		kind: kind as DocumentKind,
		name: url.searchParams.get('name') ?? '',
		description: url.searchParams.get('description') ?? '',
		contentType: request.headers.get('content-type'),
		declaredLength: length === null ? null : Number(length),
		body: request.body
	});
	return json({ document: documentView(row) }, { status: 201 });
});
