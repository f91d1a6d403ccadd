import { json } from '@sveltejs/kit';
import { z } from 'zod';
import { ApiProblem, endpoint, readJson } from '$lib/server/api';
import { config } from '$lib/server/config';
import { db } from '$lib/server/db';
import { actorOf, listKeys, rotateSigningKey, signingKey } from '$lib/server/trail';
import type { RequestHandler } from './$types';

/**
 * The public keys that sign the trail's checkpoints: `{ keys: [{ keyId, publicKey (SPKI PEM),
 * validFrom, validUntil, current }] }`, oldest first. A key is valid from its registration until
 * the next key's. Auditors and admins.
 */
export const GET: RequestHandler = endpoint(async () => {
	const current = signingKey().keyId;
	const keys = await listKeys(db());
	return json({ keys: keys.map((k) => ({ ...k, current: k.keyId === current })) });
});

const rotation = z.strictObject({ confirm: z.literal('rotate', { error: 'must be "rotate"' }) });

/**
 * Rotates the signing key (admins): a new key file, its public key registered, the rotation
 * written to the trail, and a checkpoint signed with the new key at once. A key given in
 * REGOLOG_TRAIL_SIGNING_KEY is rotated there instead (409).
 */
export const POST: RequestHandler = endpoint(async (event) => {
	await readJson(event, rotation);
	if (config.trail.signingKey) throw new ApiProblem(409, 'key_from_environment', 'The signing key comes from REGOLOG_TRAIL_SIGNING_KEY: put the new key there and restart; the server registers it as a rotation.');
	const r = await rotateSigningKey(db(), actorOf(event.locals.user!));
	return json({ keyId: r.keyId, checkpoint: r.checkpoint }, { status: 201 });
});
