import { json } from '@sveltejs/kit';
import { endpoint, pathId, ApiProblem } from '$lib/server/api';
import { findLab, publicLab } from '$lib/server/directory';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint(async ({ params, locals }) => {
	const lab = await findLab(locals.user!, pathId(params.id, 'lab'));
	if (!lab) throw new ApiProblem(404, 'not_found', 'No such lab.');
	return json({ lab: publicLab(lab) });
});
