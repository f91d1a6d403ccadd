import { z } from 'zod';
import { endpoint, readQuery } from '$lib/server/api';
import { models } from '$lib/server/models';
import { whoFrom } from '$lib/server/registry/common';
import { lineageBytes } from '$lib/server/registry/lineage';
import type { RequestHandler } from './$types';

const query = z.strictObject({
	depth: z.coerce.number({ error: 'must be a number of levels' }).int('must be a whole number of levels').min(1, 'must be at least 1').max(1000, 'must be at most 1000').optional()
});

export const GET: RequestHandler = endpoint(async ({ params, url, locals }) => {
	const { depth } = readQuery(url, query);
	const body = await lineageBytes(models(), whoFrom(locals.user!), params.code, depth ?? null);
	// the kept bytes themselves, not a copy: a Response made from bytes copies them, one made from a
	// stream passes its chunks on as they are
	const stream = new ReadableStream<Uint8Array>({
		start(controller) {
			controller.enqueue(body);
			controller.close();
		}
	});
	return new Response(stream, { headers: { 'content-type': 'application/json', 'content-length': String(body.byteLength) } });
});
