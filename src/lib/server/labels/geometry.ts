/** Label and sheet geometry, and the checked print options (format, printer offsets, start position). */
import { LABEL_FORMATS, type LabelFormat, type RenderOptions } from './types';

export const MM = 72 / 25.4;
/** mm to points */
export const pt = (mm: number) => mm * MM;

/** The label: 50.8 × 25.4 mm (2 × 1 in), landscape. */
export const LABEL_W_MM = 50.8;
export const LABEL_H_MM = 25.4;

export interface SheetGeometry {
	/** page size in points (ISO 32000: 1 pt = 1/72 in) */
	pageW: number;
	pageH: number;
	cols: number;
	rows: number;
	/** top-left corner of the first label, mm */
	leftMm: number;
	topMm: number;
	/** distance between the left (top) edges of neighbouring labels, mm */
	pitchXMm: number;
	pitchYMm: number;
}

/**
 * Regolog's own sheet grids for 50.8 × 25.4 mm labels, centred on the paper with gutters for
 * cutting: A4 (210 × 297 mm) 3 × 10, US Letter (8.5 × 11 in) 3 × 9.
 */
export const SHEETS: Record<'a4' | 'letter', SheetGeometry> = {
	a4: { pageW: 595.28, pageH: 841.89, cols: 3, rows: 10, leftMm: 21.6, topMm: 14.3, pitchXMm: 58, pitchYMm: 27 },
	letter: { pageW: 612, pageH: 792, cols: 3, rows: 9, leftMm: 24.55, topMm: 13, pitchXMm: 58, pitchYMm: 28.5 }
};

export const MAX_OFFSET_MM = 10;

/** Page size in points for a format. */
export function pageSize(format: LabelFormat): [number, number] {
	if (format === 'thermal') return [pt(LABEL_W_MM), pt(LABEL_H_MM)];
	return [SHEETS[format].pageW, SHEETS[format].pageH];
}

export function labelsPerPage(format: LabelFormat): number {
	return format === 'thermal' ? 1 : SHEETS[format].cols * SHEETS[format].rows;
}

function clampOffset(v: number | undefined, name: string): number {
	const n = v ?? 0;
	if (!Number.isFinite(n) || Math.abs(n) > MAX_OFFSET_MM) {
		throw new RangeError(`${name} must be between −${MAX_OFFSET_MM} and ${MAX_OFFSET_MM} mm, got ${v}`);
	}
	return n;
}

/** Checks the options; throws RangeError with a message meant for the person printing. */
export function checkOptions(opts: RenderOptions): Required<Pick<RenderOptions, 'offsetXmm' | 'offsetYmm' | 'startAt'>> {
	if (!LABEL_FORMATS.includes(opts.format)) throw new RangeError(`format must be one of ${LABEL_FORMATS.join(', ')}, got "${opts.format}"`);
	const offsetXmm = clampOffset(opts.offsetXmm, 'offsetX');
	const offsetYmm = clampOffset(opts.offsetYmm, 'offsetY');
	const per = labelsPerPage(opts.format);
	const startAt = opts.startAt ?? 1;
	if (!Number.isInteger(startAt) || startAt < 1 || startAt > per) {
		throw new RangeError(`startAt must be a whole number from 1 to ${per} for ${opts.format}, got ${opts.startAt}`);
	}
	return { offsetXmm, offsetYmm, startAt };
}
