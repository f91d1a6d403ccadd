import { json } from '@sveltejs/kit';
import { endpoint, readJson, errorResponse } from '$lib/server/api';
import { signIn, signInSchema } from '$lib/server/auth/service';
import { clientMeta } from '$lib/server/auth/request';
import type { RequestHandler } from './$types';

export const POST: RequestHandler = endpoint(async (event) => {
	const body = await readJson(event, signInSchema);
	const r = await signIn(body.email, body.password, clientMeta(event));
	if (!r.ok) {
		const res = errorResponse(r.status, r.code, r.message);
		if (r.retryAfter) res.headers.set('retry-after', String(r.retryAfter));
		return res;
	}
	event.cookies.set(r.cookie.name, r.cookie.value, { path: '/', ...r.cookie.attributes });
	return json({ user: { id: r.user.id, email: r.user.email, name: r.user.name, role: r.user.role, labId: r.user.labId } });
});
