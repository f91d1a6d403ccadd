/** The words on a label: the mass line, the date, and one line of text fitted to its width. */
import { formatMg } from '../../domain/mass';
import type { LabelData } from './types';

type Doc = PDFKit.PDFDocument;

export function isoDate(d: string | Date): string {
	if (d instanceof Date) return d.toISOString().slice(0, 10);
	return String(d).slice(0, 10);
}

/** Expanded uncertainty in mg, rounded up to the shown decimals (a stated U is never understated). */
function formatU(uUg: number, decimals: number): string {
	const step = decimals >= 3 ? 1 : 10 ** (3 - decimals);
	const up = Math.ceil(Math.ceil(uUg) / step) * step;
	return formatMg(up, decimals).replace(/ mg$/, '');
}

/** "2.184 ± 0.002 mg" (U with k = 2), or "— mg" when not weighed. */
export function massLine(l: Pick<LabelData, 'massUg' | 'expandedUg' | 'decimals'>): string {
	if (l.massUg == null) return 'mass not recorded';
	const dec = l.decimals ?? 3;
	const m = formatMg(l.massUg, dec).replace(/ mg$/, '');
	return l.expandedUg != null ? `${m} ± ${formatU(l.expandedUg, dec)} mg` : `${m} mg`;
}

/** Writes text on one line at (x, y), shrinking from `size` to `min` and then cutting with "…" to fit `w`. */
export function fitLine(doc: Doc, text: string, x: number, y: number, w: number, font: string, size: number, min: number) {
	doc.font(font);
	let s = size;
	doc.fontSize(s);
	while (s > min && doc.widthOfString(text) > w) {
		s -= 0.25;
		doc.fontSize(s);
	}
	let t = text;
	if (doc.widthOfString(t) > w) {
		while (t.length > 1 && doc.widthOfString(t + '…') > w) t = t.slice(0, -1);
		t = t.trimEnd() + '…';
	}
	doc.text(t, x, y, { lineBreak: false });
	return s;
}
