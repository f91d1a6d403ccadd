/** The handling or hazard mark along a label's foot. */
import type { LabelMark } from './types';

type Doc = PDFKit.PDFDocument;
const INK = '#000000';

const SUBSCRIPT = /[\u2080-\u2089]/;
/** Splits "N₂ only" into runs, subscript digits apart, since the embedded font has no subscript glyphs. */
function runs(text: string): { t: string; sub: boolean }[] {
	const out: { t: string; sub: boolean }[] = [];
	for (const ch of text) {
		const sub = SUBSCRIPT.test(ch);
		const c = sub ? String.fromCharCode(ch.charCodeAt(0) - 0x2080 + 0x30) : ch;
		const last = out[out.length - 1];
		if (last && last.sub === sub) last.t += c;
		else out.push({ t: c, sub });
	}
	return out;
}

function markWidth(doc: Doc, text: string, size: number): number {
	let w = 0;
	for (const r of runs(text)) {
		doc.fontSize(r.sub ? size * 0.7 : size);
		w += doc.widthOfString(r.t);
	}
	return w;
}

/**
 * The handling mark: white bold words on a black rounded band along the label's foot. A hazard
 * mark adds three slanted stripes at the band's start and "site rules" after the words: the
 * label only flags the hazard; the institution's safety rules say what to do.
 */
export function drawMark(doc: Doc, mark: LabelMark, x: number, y: number, w: number, h: number) {
	doc.save();
	doc.roundedRect(x, y, w, h, h * 0.28).fill(INK);
	let tx = x + h * 0.35;
	if (mark.hazard) {
		doc.save();
		doc.roundedRect(x, y, w, h, h * 0.28).clip();
		doc.lineWidth(h * 0.16).strokeColor('#ffffff');
		for (let i = 0; i < 3; i++) {
			const sx = x + h * 0.3 + i * h * 0.42;
			doc.moveTo(sx, y + h).lineTo(sx + h * 0.45, y).stroke();
		}
		doc.restore();
		tx = x + h * 0.3 + 3 * h * 0.42 + h * 0.3;
	}
	const suffix = mark.hazard ? ' · site rules' : '';
	const room = x + w - tx - h * 0.3;
	doc.font('label-bold');
	let size = h * 0.72;
	while (size > 4 && markWidth(doc, mark.text, size) + (suffix ? (doc.font('label').fontSize(size), doc.widthOfString(suffix)) : 0) > room) {
		doc.font('label-bold');
		size -= 0.25;
	}
	const baseY = y + h / 2 + size * 0.36;
	doc.fillColor('#ffffff');
	let cx = tx;
	doc.font('label-bold');
	for (const r of runs(mark.text)) {
		const s = r.sub ? size * 0.7 : size;
		doc.fontSize(s);
		doc.text(r.t, cx, baseY + (r.sub ? size * 0.18 : 0), { lineBreak: false, baseline: 'alphabetic' });
		cx += doc.widthOfString(r.t);
	}
	if (suffix) {
		doc.font('label').fontSize(size);
		doc.text(suffix, cx, baseY, { lineBreak: false, baseline: 'alphabetic' });
	}
	doc.restore();
}
