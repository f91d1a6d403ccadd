import { json } from '@sveltejs/kit';
import { endpoint, ApiProblem } from '$lib/server/api';
import { checkedCode } from '$lib/server/labels/http';
import { itemVisible } from '$lib/server/labels/lookup';
import type { RequestHandler } from './$types';
import { itemPath } from '$lib/domain/codes';

/** GET /api/scan/{code}: whether a scanned code names an item the user can open (404 otherwise). */
export const GET: RequestHandler = endpoint(async ({ params, locals }) => {
	const code = checkedCode(params.code);
	if (!(await itemVisible(locals.user!, code))) throw new ApiProblem(404, 'not_found', `No item ${code} that you can see: the label may belong to another facility or lab.`);
	return json({ code, href: `/items/${itemPath(code)}` });
});
