import { z } from 'zod';
import { ApiProblem, endpoint, readQuery } from '$lib/server/api';
import { db } from '$lib/server/db';
import { bundleRange, bundleStream } from '$lib/server/trail';
import type { RequestHandler } from './$types';

const seq = (what: string) => z.coerce.number({ error: `must be an event number (${what})` }).int().min(1, 'must be 1 or more');
const query = z.strictObject({ from: seq('the first event').optional(), to: seq('the last event').optional() });

/**
 * The trail as a bundle for offline verification (`application/x-ndjson`; the format is in
 * src/lib/domain/trail-verify.ts): header, public keys, checkpoints, events from..to, end line.
 * `from` moves down to just after the signed checkpoint at or before it, so the first event is
 * anchored; `to` defaults to the head. `x-regolog-bundle-events` says how many events follow, for a
 * progress bar. Auditors and admins.
 */
export const GET: RequestHandler = endpoint(async ({ url }) => {
	const q = readQuery(url, query);
	if (q.from !== undefined && q.to !== undefined && q.to < q.from) throw new ApiProblem(400, 'invalid_query', 'Invalid query: to: must not be before from', { to: 'must not be before from' });
	const range = await bundleRange(db(), q);
	return new Response(bundleStream(db(), range), {
		headers: {
			'content-type': 'application/x-ndjson; charset=utf-8',
			'content-disposition': `attachment; filename="regolog-trail-${range.from}-${range.to}.ndjson"`,
			'x-regolog-bundle-events': String(range.events)
		}
	});
});
