import { json } from '@sveltejs/kit';
import { endpoint } from '$lib/server/api';
import { signOut } from '$lib/server/auth/session';
import type { RequestHandler } from './$types';

export const POST: RequestHandler = endpoint(async (event) => {
	await signOut(event);
	return json({ signedOut: true });
});
