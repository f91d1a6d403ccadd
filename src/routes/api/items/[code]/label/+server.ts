import { endpoint, readQuery, ApiProblem } from '$lib/server/api';
import { checkedCode, pdfResponse, printOptions, renderOptions } from '$lib/server/labels/http';
import { findLabels } from '$lib/server/labels/lookup';
import type { RequestHandler } from './$types';
import { codeForFileName } from '$lib/domain/codes';

/** GET /api/items/{code}/label?format=thermal|a4|letter[&offsetX=&offsetY=&startAt=]: the item's label as PDF. */
export const GET: RequestHandler = endpoint(async ({ params, url, locals }) => {
	const code = checkedCode(params.code);
	const opts = renderOptions(readQuery(url, printOptions), `Label ${code}`);
	const { labels } = await findLabels(locals.user!, [code]);
	if (labels.length === 0) throw new ApiProblem(404, 'not_found', `No item ${code} that you can see.`);
	return pdfResponse(labels, opts, `${codeForFileName(code)}-label.pdf`);
});
