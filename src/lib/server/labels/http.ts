/**
 * Shared by the label routes: reading the print options, checking codes, and answering a PDF
 * stream. Failures are ApiProblems, so they come back as `{ "error": { "code", "message" } }`.
 */
import { Readable } from 'node:stream';
import { z } from 'zod';
import { parseCode } from '../../domain/codes';
import { ApiProblem } from '../api';
import { LABEL_FORMATS, MAX_OFFSET_MM, checkOptions, labelsPerPage, renderLabels, type LabelData, type LabelFormat, type RenderOptions } from './render';

const mm = (name: string) =>
	z.coerce
		.number({ error: `${name} must be a number of millimetres` })
		.min(-MAX_OFFSET_MM, `${name} must be between −${MAX_OFFSET_MM} and ${MAX_OFFSET_MM} mm`)
		.max(MAX_OFFSET_MM, `${name} must be between −${MAX_OFFSET_MM} and ${MAX_OFFSET_MM} mm`);

export const printOptions = z.object({
	format: z.enum(LABEL_FORMATS as [LabelFormat, ...LabelFormat[]], { error: `format must be one of ${LABEL_FORMATS.join(', ')}` }).default('thermal'),
	offsetX: mm('offsetX').optional(),
	offsetY: mm('offsetY').optional(),
	startAt: z.coerce.number({ error: 'startAt must be a sheet position' }).int('startAt must be a whole number').min(1, 'startAt starts at 1').optional()
});
export type PrintOptions = z.infer<typeof printOptions>;

/** Print options as render options; a start position beyond the sheet is a 400. */
export function renderOptions(p: PrintOptions, title: string): RenderOptions {
	const opts: RenderOptions = { format: p.format, offsetXmm: p.offsetX, offsetYmm: p.offsetY, startAt: p.startAt, title };
	try {
		checkOptions(opts);
	} catch (e) {
		throw new ApiProblem(400, 'invalid_query', e instanceof Error ? e.message : String(e));
	}
	return opts;
}

/** A typed or scanned code, checked (ISO/IEC 7064 MOD 37,36); 400 naming what is wrong. */
export function checkedCode(text: string, where = 'code'): string {
	const p = parseCode(text);
	if (!p.ok) {
		throw new ApiProblem(
			400,
			p.kind === 'check' ? 'wrong_check_character' : 'invalid_code',
			`Item code ${JSON.stringify(String(text).trim())}: ${p.reason}.`,
			{ [where]: p.reason }
		);
	}
	return p.code;
}

/** Sheets a batch needs, for the response header the print button shows. */
export function sheetsFor(count: number, format: LabelFormat, startAt = 1): number {
	return Math.max(1, Math.ceil((count + startAt - 1) / labelsPerPage(format)));
}

/** Streams the labels as application/pdf. */
export function pdfResponse(labels: LabelData[], opts: RenderOptions, filename: string): Response {
	const stream = renderLabels(labels, opts);
	return new Response(Readable.toWeb(stream) as ReadableStream, {
		headers: {
			'content-type': 'application/pdf',
			'content-disposition': `inline; filename="${filename}"`,
			'x-regolog-labels': String(labels.length),
			'x-regolog-pages': String(opts.format === 'thermal' ? Math.max(1, labels.length) : sheetsFor(labels.length, opts.format, opts.startAt))
		}
	});
}
