import { json } from '@sveltejs/kit';
import { endpoint, readJson } from '$lib/server/api';
import { issueToken, listTokens, tokenCreateSchema } from '$lib/server/accounts';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint(async ({ locals }) => json({ tokens: await listTokens(locals.user!.id) }));

export const POST: RequestHandler = endpoint(async (event) => {
	const { token, secret } = await issueToken(event.locals.user!, await readJson(event, tokenCreateSchema));
	// The secret is shown this once; only its hash is kept.
	return json({ token: { id: token.id, label: token.label, prefix: token.prefix, expiresAt: token.expiresAt }, secret }, { status: 201 });
});
