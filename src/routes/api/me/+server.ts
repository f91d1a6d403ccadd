import { json } from '@sveltejs/kit';
import { endpoint } from '$lib/server/api';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint(async ({ locals }) => json({ user: locals.user }));
