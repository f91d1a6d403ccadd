import { json } from '@sveltejs/kit';
import { endpoint, readJson, pathId, ApiProblem } from '$lib/server/api';
import { publicUser, updateUser, userPatchSchema } from '$lib/server/accounts';
import { models, User } from '$lib/server/models';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint(async ({ params }) => {
	models();
	const user = await User.findByPk(pathId(params.id, 'user'), { include: ['lab'] });
	if (!user) throw new ApiProblem(404, 'not_found', 'No such user.');
	return json({ user: publicUser(user) });
});

export const PATCH: RequestHandler = endpoint(async (event) => {
	const id = pathId(event.params.id, 'user');
	const patch = await readJson(event, userPatchSchema);
	const user = await updateUser(event.locals.user!, id, patch);
	return json({ user: publicUser(user!) });
});
