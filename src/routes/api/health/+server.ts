import { json } from '@sveltejs/kit';
import { checkHealth } from '$lib/server/health';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = async () => {
	const { ok, parts } = await checkHealth();
	if (ok) return json(parts);
	const failing = (Object.keys(parts) as (keyof typeof parts)[]).filter((k) => parts[k] !== 'ok');
	return json(
		{
			...parts,
			error: { code: 'unhealthy', message: `Not healthy: ${failing.join(', ')} unavailable` }
		},
		{ status: 503 }
	);
};
