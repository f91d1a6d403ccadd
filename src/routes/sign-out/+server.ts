import { redirect } from '@sveltejs/kit';
import { signOut } from '$lib/server/auth/session';
import type { RequestHandler } from './$types';

/** The header's sign-out form posts here; SvelteKit's origin check refuses cross-site posts. */
export const POST: RequestHandler = async (event) => {
	await signOut(event);
	redirect(303, '/sign-in');
};

export const GET: RequestHandler = async () => redirect(303, '/');
