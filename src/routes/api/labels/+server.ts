import { z } from 'zod';
import { endpoint, readJson, ApiProblem } from '$lib/server/api';
import { parseCode } from '$lib/domain/codes';
import { pdfResponse, printOptions, renderOptions } from '$lib/server/labels/http';
import { findLabels, MAX_BATCH } from '$lib/server/labels/lookup';
import type { RequestHandler } from './$types';

const body = printOptions.extend({
	codes: z
		.array(z.string({ error: 'each code must be text' }), { error: 'codes must be a list of item codes' })
		.min(1, 'codes must name at least one item')
		.max(MAX_BATCH, `codes may name at most ${MAX_BATCH} items per request`)
});

/**
 * POST /api/labels { codes, format, offsetX?, offsetY?, startAt? }: labels for several items
 * (a split's children, a table selection, a transfer's manifest) as one PDF, in the order given.
 */
export const POST: RequestHandler = endpoint(async (event) => {
	const input = await readJson(event, body);
	const fields: Record<string, string> = {};
	const codes: string[] = [];
	let onlyCheckErrors = true;
	input.codes.forEach((text, i) => {
		const p = parseCode(text);
		if (p.ok) return void codes.push(p.code);
		fields[`codes.${i}`] = `${JSON.stringify(text.trim())}: ${p.reason}`;
		if (p.kind !== 'check') onlyCheckErrors = false;
	});
	const bad = Object.values(fields);
	if (bad.length) {
		const what = bad.length === 1 ? 'One code is' : `${bad.length} codes are`;
		throw new ApiProblem(400, onlyCheckErrors ? 'wrong_check_character' : 'invalid_code', `${what} not valid: ${bad[0]}`, fields);
	}
	const opts = renderOptions(input, `Labels (${codes.length})`);
	const { labels, missing } = await findLabels(event.locals.user!, codes);
	if (missing.length) {
		throw new ApiProblem(404, 'not_found', `No item${missing.length > 1 ? 's' : ''} ${missing.slice(0, 10).join(', ')}${missing.length > 10 ? ` and ${missing.length - 10} more` : ''} that you can see.`, undefined, { missing });
	}
	return pdfResponse(labels, opts, `labels-${labels.length}.pdf`);
});
