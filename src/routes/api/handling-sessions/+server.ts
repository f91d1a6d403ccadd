import { json } from '@sveltejs/kit';
import { endpoint, readJson, readQuery } from '$lib/server/api';
import { db } from '$lib/server/db';
import { listQuery, listSessions } from '$lib/server/handling/sessions';
import { recordSession, sessionInput } from '$lib/server/handling/record';
import { whoFrom } from '$lib/server/registry/common';
import type { RequestHandler } from './$types';

/** Handling sessions, newest first; `?item=CODE`, `?collection=TRN`, `?limit=`. */
export const GET: RequestHandler = endpoint(async ({ url, locals }) => {
	const q = readQuery(url, listQuery);
	return json({ sessions: await listSessions(db(), whoFrom(locals.user!), q) });
});

/** Records one handling session (curators); refused whole, with the field named, on bad input. */
export const POST: RequestHandler = endpoint(async (event) => {
	const input = await readJson(event, sessionInput);
	const session = await recordSession(db(), whoFrom(event.locals.user!), input);
	return json({ session }, { status: 201 });
});
