import { json } from '@sveltejs/kit';
import { endpoint, pathId } from '$lib/server/api';
import { revokeToken } from '$lib/server/accounts';
import type { RequestHandler } from './$types';

export const DELETE: RequestHandler = endpoint(async ({ params, locals }) => {
	const tok = await revokeToken(locals.user!, pathId(params.id, 'token'));
	return json({ token: { id: tok.id, revokedAt: tok.revokedAt } });
});
