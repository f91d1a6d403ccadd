import { json } from '@sveltejs/kit';
import { z } from 'zod';
import { endpoint, readJson, readQuery } from '$lib/server/api';
import { inviteSchema, inviteUser, publicUser } from '$lib/server/accounts';
import { listUsers } from '$lib/server/directory';
import type { RequestHandler } from './$types';

const query = z.object({
	q: z.string().max(100, 'q has at most 100 characters.').optional(),
	sort: z.enum(['name', 'email', 'role', 'created', 'active']).optional(),
	dir: z.enum(['asc', 'desc']).optional()
}).strict();

export const GET: RequestHandler = endpoint(async ({ url }) => json({ users: await listUsers(readQuery(url, query)) }));

export const POST: RequestHandler = endpoint(async (event) => {
	const input = await readJson(event, inviteSchema);
	const user = await inviteUser(event.locals.user!, input);
	return json({ user: publicUser(user) }, { status: 201 });
});
