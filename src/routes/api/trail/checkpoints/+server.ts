import { json } from '@sveltejs/kit';
import { z } from 'zod';
import { endpoint, readQuery } from '$lib/server/api';
import { db } from '$lib/server/db';
import { listCheckpoints } from '$lib/server/trail';
import type { RequestHandler } from './$types';

const query = z.strictObject({
	after: z.coerce.number({ error: 'must be an event number' }).int().min(0).optional(),
	last: z.coerce.number({ error: 'must be a number' }).int().min(1).max(100_000, 'is at most 100000').optional()
});

/**
 * The signed checkpoints, oldest first: `{ checkpoints: [{ seq, hash, keyId, signed, signature }] }`
 * where `signed` is the exact UTF-8 text that was signed (RFC 8785 canonical JSON of seq, hash,
 * count, time and key id) and `signature` its Ed25519 signature in base64. `after` leaves out
 * those up to a seq; `last` keeps only the newest n. Auditors and admins.
 */
export const GET: RequestHandler = endpoint(async ({ url }) => {
	const q = readQuery(url, query);
	return json({ checkpoints: await listCheckpoints(db(), q) });
});
