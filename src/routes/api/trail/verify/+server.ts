import { json } from '@sveltejs/kit';
import { z } from 'zod';
import { ApiProblem, endpoint, readQuery } from '$lib/server/api';
import { db } from '$lib/server/db';
import { listCheckpoints, verifyFromCheckpoint, verifyTrail } from '$lib/server/trail';
import type { RequestHandler } from './$types';

const query = z.strictObject({
	from: z
		.union([z.literal('latest'), z.coerce.number().int().min(1)], { error: 'must be the seq of a signed checkpoint, or latest' })
		.optional()
});

/**
 * Verifies the tamper-evident trail (DESIGN.md §3.9). Without `from`, the whole chain and every
 * signed checkpoint: `{ ok, events, firstBrokenAt, reason?, checkpoints? }`. With
 * `from=<checkpoint seq>` (or `from=latest`), incrementally: that checkpoint's signature, then every link and hash
 * after it to the head, and the later checkpoints: `{ …, checkpoint: { seq, keyId, time,
 * signature }, head, after }`. Auditors and admins (ACCESS in auth/access.ts). A broken chain is
 * still a 200: the verification itself succeeded, and its finding is the answer.
 */
export const GET: RequestHandler = endpoint(async ({ url }) => {
	const q = readQuery(url, query);
	if (q.from === 'latest') {
		// the newest checkpoint; with none yet, the whole trail
		const [last] = await listCheckpoints(db(), { last: 1 });
		q.from = last?.seq;
	}
	if (q.from === undefined) {
		const r = await verifyTrail(db());
		return json({ ok: r.ok, events: r.events, firstBrokenAt: r.firstBrokenAt, ...(r.reason ? { reason: r.reason } : {}), ...(r.checkpoints ? { checkpoints: r.checkpoints } : {}) });
	}
	const r = await verifyFromCheckpoint(db(), q.from);
	if (!r) throw new ApiProblem(404, 'no_checkpoint', `There is no signed checkpoint at event ${q.from}; GET /api/trail/checkpoints lists them.`, { from: 'is not the seq of a signed checkpoint' });
	return json(r);
});
