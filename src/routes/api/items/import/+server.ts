import { json } from '@sveltejs/kit';
import { z } from 'zod';
import { ApiProblem, endpoint, readQuery } from '$lib/server/api';
import { models } from '$lib/server/models';
import { whoFrom } from '$lib/server/registry/common';
import { MAX_IMPORT_BYTES, checkImport, commitImport } from '$lib/server/registry/import';
import type { RequestHandler } from './$types';

const query = z.strictObject({ mode: z.enum(['preview', 'commit'], { error: 'must be preview or commit' }) });

/**
 * POST text/csv. mode=preview answers every row with its errors and writes nothing.
 * mode=commit registers all rows in one transaction and streams progress as NDJSON lines:
 * {"progress":n,"total":N} … then {"done":true,"codes":[…]} or {"error":{…}} (nothing imported).
 */
export const POST: RequestHandler = endpoint(async ({ request, url, locals }) => {
	const { mode } = readQuery(url, query);
	const type = (request.headers.get('content-type') ?? '').toLowerCase();
	if (!type.startsWith('text/csv') && !type.startsWith('text/plain')) {
		throw new ApiProblem(415, 'unsupported_media_type', 'Send the file as text/csv.');
	}
	const length = Number(request.headers.get('content-length') ?? 0);
	if (length > MAX_IMPORT_BYTES) throw new ApiProblem(413, 'too_large', `The file is larger than ${MAX_IMPORT_BYTES / 1_000_000} MB; split it into smaller files.`);
	const text = await request.text();
	const sq = models();
	const rows = await checkImport(sq, text);
	if (mode === 'preview') {
		return json({
			rows: rows.map((r) => ({ line: r.line, ok: r.ok, errors: r.errors, ...r.summary })),
			total: rows.length,
			valid: rows.filter((r) => r.ok).length
		});
	}
	const bad = rows.filter((r) => !r.ok);
	if (bad.length) {
		throw new ApiProblem(422, 'invalid_rows', `${bad.length} of ${rows.length} rows have errors; nothing was imported. First: line ${bad[0].line}: ${Object.values(bad[0].errors)[0]}`, undefined, {
			rows: bad.map((r) => ({ line: r.line, errors: r.errors }))
		});
	}
	const who = whoFrom(locals.user!);
	const encoder = new TextEncoder();
	const stream = new ReadableStream({
		async start(controller) {
			const send = (v: unknown) => controller.enqueue(encoder.encode(JSON.stringify(v) + '\n'));
			let last = 0;
			try {
				const codes = await commitImport(sq, who, text, (done, total) => {
					if (done === total || done - last >= Math.max(1, Math.floor(total / 50))) {
						last = done;
						send({ progress: done, total });
					}
				});
				send({ done: true, imported: codes.length, codes });
			} catch (e) {
				const p = e instanceof ApiProblem ? e : new ApiProblem(500, 'internal', 'The import failed on our side; nothing was imported.');
				if (!(e instanceof ApiProblem)) console.error('[regolog] import failed:', e);
				send({ error: { code: p.code, message: p.message, ...(p.extra ?? {}) } });
			} finally {
				controller.close();
			}
		}
	});
	return new Response(stream, { status: 200, headers: { 'content-type': 'application/x-ndjson; charset=utf-8' } });
});
