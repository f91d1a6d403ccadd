import { json } from '@sveltejs/kit';
import { endpoint, readJson } from '$lib/server/api';
import { createLab, labSchema } from '$lib/server/accounts';
import { listLabs, publicLab } from '$lib/server/directory';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint(async ({ locals }) => json({ labs: await listLabs(locals.user!) }));

export const POST: RequestHandler = endpoint(async (event) => {
	const lab = await createLab(event.locals.user!, await readJson(event, labSchema));
	return json({ lab: publicLab(lab) }, { status: 201 });
});
