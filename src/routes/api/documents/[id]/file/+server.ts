import { endpoint, pathId } from '$lib/server/api';
import { models } from '$lib/server/models';
import { whoFrom } from '$lib/server/registry/common';
import { findDocument } from '$lib/server/documents/store';
import { downloadResponse } from '$lib/server/documents/download';
import type { RequestHandler } from './$types';

/** The file itself, streamed through the server after the visibility check, verified against its SHA-256. */
export const GET: RequestHandler = endpoint(async ({ params, locals }) => {
	const d = await findDocument(models(), whoFrom(locals.user!), pathId(params.id, 'document'));
	return downloadResponse(d);
});
