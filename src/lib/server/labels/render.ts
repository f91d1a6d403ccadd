/**
 * Label PDFs: one thermal label per page, or A4 / US Letter sheets in a grid.
 *
 * Every label carries the item code with its check character (as a QR code and as text, with a
 * word saying that the character after the slash is the check character), the collection, the
 * mass with its expanded uncertainty, a date, the holder and, where the collection's rules, the
 * item's storage or the coolant it travels with ask for one, a short handling or hazard mark.
 *
 * The QR code is drawn as vector rectangles from the module matrix of `qrcode.create`, so a
 * thermal printer renders every module edge on its own dot grid instead of resampling an image.
 * Error correction level Q (about 25 % of codewords recoverable, ISO/IEC 18004): a label
 * wrapped round a 2 ml vial foreshortens the modules near its edges and catches a band of glare
 * across the glass, and frost or a glove smear takes out more; level Q survives that, while
 * level H would need a larger symbol version for the same URL and so smaller modules on the same
 * 19 mm square, which a 203 dpi printer renders less faithfully.
 *
 * Output is a stream: pages are written out as they are finished (pdfkit flushes each page),
 * the generator waits whenever the reader falls behind, and labels may come from an async
 * iterable, so a large batch never exists as one big array or buffer.
 *
 * One file per concern beside this one: types.ts (what a label shows), geometry.ts (label and
 * sheet sizes, print options), qr.ts (the URL and its symbol), text.ts (the words and fitting
 * them), mark.ts (the handling or hazard band). Everything is exported from here as before.
 */
import PDFDocument from 'pdfkit';
import { createRequire } from 'node:module';
import { readFileSync } from 'node:fs';
import type { Readable } from 'node:stream';
import { CHECK_SEPARATOR, parseCode } from '../../domain/codes';
import { config } from '../config';
import type { LabelData, RenderOptions } from './types';
import { LABEL_H_MM, LABEL_W_MM, SHEETS, checkOptions, labelsPerPage, pageSize, pt } from './geometry';
import { drawQrRaster, drawQrVector, itemUrl } from './qr';
import { fitLine, isoDate, massLine } from './text';
import { drawMark } from './mark';

export * from './types';
export * from './geometry';
export { itemUrl } from './qr';
export { massLine } from './text';

const requireHere = createRequire(import.meta.url);
let fontCache: { regular: Buffer; bold: Buffer } | null = null;
function fonts() {
	if (!fontCache) {
		const file = (w: number) =>
			readFileSync(requireHere.resolve(`@fontsource/atkinson-hyperlegible/files/atkinson-hyperlegible-latin-${w}-normal.woff`));
		fontCache = { regular: file(400), bold: file(700) };
	}
	return fontCache;
}

const INK = '#000000';
const SOFT = '#555555';

type Doc = PDFKit.PDFDocument;

/** One label with its top-left corner at (x, y) in points. */
async function drawLabel(doc: Doc, l: LabelData, x: number, y: number, origin: string, raster: boolean) {
	const W = pt(LABEL_W_MM);
	const H = pt(LABEL_H_MM);
	const qrSize = pt(19.4);
	const qrX = x + pt(2.6);
	const qrY = y + (H - qrSize) / 2;
	const payload = itemUrl(l.code, origin);
	const module = raster ? await drawQrRaster(doc, payload, qrX, qrY, qrSize) : drawQrVector(doc, payload, qrX, qrY, qrSize);

	// ISO/IEC 18004 asks for a quiet zone of 4 modules round the symbol; the text keeps 5, since
	// bold glyphs right beside the symbol can pass for finder patterns to a weak reader.
	const colX = qrX + qrSize + Math.max(5 * module, pt(2.8));
	const colW = x + W - pt(1.6) - colX;
	let cy = y + pt(2.6);

	doc.fillColor(INK);
	const codeSize = fitLine(doc, l.code, colX, cy, colW, 'label-bold', 10.5, 7);
	cy += codeSize * 1.12;
	// A hairline under the code, the width of the column: the code is what people compare.
	doc.save().moveTo(colX, cy).lineTo(colX + colW, cy).lineWidth(0.4).strokeColor(INK).stroke().restore();
	cy += pt(0.9);
	fitLine(doc, l.collection, colX, cy, colW, 'label', 6.5, 5);
	cy += 6.5 * 1.2;
	fitLine(doc, massLine(l), colX, cy, colW, 'label-bold', 7.5, 5.5);
	cy += 7.5 * 1.2;
	// Everything on the label is solid black: a thermal head prints no greys, only dithers.
	// the date, and what the character after the slash is: the check character (ISO/IEC 7064)
	const check = l.code.slice(l.code.lastIndexOf(CHECK_SEPARATOR));
	fitLine(doc, `${isoDate(l.date)} · ${check} is check`, colX, cy, colW, 'label', 6, 5);
	cy += 6 * 1.2;
	fitLine(doc, l.holder, colX, cy, colW, 'label', 6, 5);

	if (l.mark?.text) {
		const h = pt(3.4);
		drawMark(doc, l.mark, colX, y + H - pt(2.4) - h, colW, h);
	}
}

/** Thin corner ticks just outside each label on a sheet, as cutting guides. */
function cutTicks(doc: Doc, x: number, y: number) {
	const W = pt(LABEL_W_MM);
	const H = pt(LABEL_H_MM);
	const g = pt(0.6);
	const t = pt(2);
	doc.save().lineWidth(0.3).strokeColor('#9a9a9a');
	for (const [cx, cy, dx, dy] of [
		[x, y, -1, -1],
		[x + W, y, 1, -1],
		[x, y + H, -1, 1],
		[x + W, y + H, 1, 1]
	]) {
		doc.moveTo(cx + dx * g, cy).lineTo(cx + dx * (g + t), cy).stroke();
		doc.moveTo(cx, cy + dy * g).lineTo(cx, cy + dy * (g + t)).stroke();
	}
	doc.restore();
}

function assertLabel(l: LabelData) {
	const p = parseCode(l.code);
	if (!p.ok || p.code !== l.code) throw new RangeError(`label for "${l.code}": ${p.ok ? `write the code as PREFIX-NNNNN/C in capitals: ${p.code}` : p.reason}`);
}

const HIGH_WATER = 1 << 20;

/**
 * Renders labels as a PDF stream. `labels` may be an array, any iterable or an async iterable;
 * each label is drawn, its page flushed, and generation pauses while more than 1 MiB waits to
 * be read. An empty input gives one empty page. Errors (a bad code) destroy the stream.
 */
export function renderLabels(labels: Iterable<LabelData> | AsyncIterable<LabelData>, opts: RenderOptions): Readable {
	const { offsetXmm, offsetYmm, startAt } = checkOptions(opts);
	const origin = opts.origin ?? config.origin;
	const [pageW, pageH] = pageSize(opts.format);
	const doc = new PDFDocument({
		size: [pageW, pageH],
		margin: 0,
		autoFirstPage: false,
		compress: true,
		info: { Title: opts.title ?? 'Regolog labels', Creator: 'Regolog', Producer: 'Regolog' }
	});
	const f = fonts();
	doc.registerFont('label', f.regular);
	doc.registerFont('label-bold', f.bold);

	let wake: (() => void) | null = null;
	doc._read = () => {
		const w = wake;
		wake = null;
		w?.();
	};
	const drain = () => (doc.readableLength > HIGH_WATER && !doc.destroyed ? new Promise<void>((r) => (wake = r)) : null);

	const ox = pt(offsetXmm);
	const oy = pt(offsetYmm);
	const per = labelsPerPage(opts.format);
	const sheet = opts.format === 'thermal' ? null : SHEETS[opts.format];

	(async () => {
		let slot = startAt - 1;
		let pageNo = 0;
		const newPage = () => {
			doc.addPage({ size: [pageW, pageH], margin: 0 });
			pageNo++;
			if (sheet) {
				doc.font('label').fontSize(6).fillColor(SOFT);
				doc.text(
					`Regolog labels · sheet ${pageNo} · ${sheet.cols} × ${sheet.rows} at 50.8 × 25.4 mm · offset ${offsetXmm >= 0 ? '+' : ''}${offsetXmm} / ${offsetYmm >= 0 ? '+' : ''}${offsetYmm} mm · in each code the character after “/” is its check character`,
					pt(sheet.leftMm),
					pt(Math.max(3, sheet.topMm - 6)),
					{ lineBreak: false }
				);
				doc.fillColor(INK);
			}
		};
		for await (const l of labels as AsyncIterable<LabelData>) {
			if (doc.destroyed) return;
			assertLabel(l);
			if (pageNo === 0 || slot >= per) {
				if (pageNo > 0) slot = 0;
				newPage();
				const wait = drain();
				if (wait) await wait;
			}
			let x = ox;
			let y = oy;
			if (sheet) {
				const col = slot % sheet.cols;
				const row = Math.floor(slot / sheet.cols);
				x += pt(sheet.leftMm + col * sheet.pitchXMm);
				y += pt(sheet.topMm + row * sheet.pitchYMm);
				cutTicks(doc, x, y);
			}
			await drawLabel(doc, l, x, y, origin, !!opts.rasterQr);
			slot++;
		}
		if (pageNo === 0) newPage();
		doc.end();
	})().catch((e) => doc.destroy(e instanceof Error ? e : new Error(String(e))));
	return doc as unknown as Readable;
}

/** Collects a rendered PDF in memory: for single labels and tests, not for large batches. */
export async function renderLabelsToBuffer(labels: Iterable<LabelData> | AsyncIterable<LabelData>, opts: RenderOptions): Promise<Buffer> {
	const chunks: Buffer[] = [];
	for await (const c of renderLabels(labels, opts)) chunks.push(Buffer.from(c));
	return Buffer.concat(chunks);
}
