import { json } from '@sveltejs/kit';
import { endpoint } from '$lib/server/api';
import { db } from '$lib/server/db';
import { verifyTrail } from '$lib/server/trail';
import type { RequestHandler } from './$types';

/**
 * Walks the whole tamper-evident trail (DESIGN.md §3.9) and answers
 * `{ ok, events, firstBrokenAt }`, with `reason` saying what broke when the chain does not hold.
 * Auditors and admins only (ACCESS in auth/access.ts). A broken chain is still a 200: the
 * verification itself succeeded, and its finding is the answer.
 */
export const GET: RequestHandler = endpoint(async () => {
	const r = await verifyTrail(db());
	return json({ ok: r.ok, events: r.events, firstBrokenAt: r.firstBrokenAt, ...(r.reason ? { reason: r.reason } : {}) });
});
