/**
 * Label PDFs: one thermal label per page, or A4 / US Letter sheets in a grid.
 *
 * Every label carries the item code with its check character (as a QR code and as text), the
 * collection, the mass with its expanded uncertainty, a date, the holder and, where the
 * collection's rules ask for one, a short handling or hazard mark.
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
 */
import PDFDocument from 'pdfkit';
import QRCode from 'qrcode';
import { createRequire } from 'node:module';
import { readFileSync } from 'node:fs';
import type { Readable } from 'node:stream';
import { parseCode } from '../../domain/codes';
import { formatMg } from '../../domain/mass';
import { config } from '../config';

export type LabelFormat = 'thermal' | 'a4' | 'letter';
export const LABEL_FORMATS: readonly LabelFormat[] = ['thermal', 'a4', 'letter'];

export interface LabelMark {
	/** A few words, e.g. "N₂ only", "no air", "keep below −70 °C"; subscript digits are drawn small. */
	text: string;
	/** True for a hazard (cryogenic storage, dry ice): drawn with stripes and a pointer to site rules. */
	hazard?: boolean;
}

export interface LabelData {
	/** Item code PREFIX-NNNNN-C with its check character (ISO/IEC 7064 MOD 37,36). */
	code: string;
	/** Collection, e.g. "TRN · Tarnwick regolith". */
	collection: string;
	/** Recorded mass in whole µg, or null when not weighed yet. */
	massUg: number | null;
	/** Expanded uncertainty U (k = 2) in µg, or null. */
	expandedUg?: number | null;
	/** mg decimals the balance supports; 3 by default. */
	decimals?: number;
	/** Date printed on the label (ISO 8601 calendar date), e.g. the date of the split. */
	date: string | Date;
	/** Who holds the item: the facility or a lab. */
	holder: string;
	mark?: LabelMark | null;
}

export interface RenderOptions {
	format: LabelFormat;
	/** Shift of everything printed, in mm, to correct a printer's drift: + moves right. */
	offsetXmm?: number;
	/** + moves down. */
	offsetYmm?: number;
	/** Sheets only: the first grid position to print on (1 = top left, row by row). */
	startAt?: number;
	/** Public origin for the QR URL; the configured origin by default. */
	origin?: string;
	/** Document title in the PDF metadata. */
	title?: string;
	/**
	 * Reference rendering for the benchmark only: the QR as an embedded PNG instead of vector
	 * modules. Labels printed by Regolog always use vector modules.
	 */
	rasterQr?: boolean;
}

export const MM = 72 / 25.4;
const pt = (mm: number) => mm * MM;

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

/** The URL a label's QR code holds. */
export function itemUrl(code: string, origin = config.origin): string {
	return `${origin.replace(/\/+$/, '')}/items/${code}`;
}

const QR_LEVEL = 'Q' as const;

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

function isoDate(d: string | Date): string {
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

type Doc = PDFKit.PDFDocument;

/** Writes text on one line at (x, y), shrinking from `size` to `min` and then cutting with "…" to fit `w`. */
function fitLine(doc: Doc, text: string, x: number, y: number, w: number, font: string, size: number, min: number) {
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
function drawMark(doc: Doc, mark: LabelMark, x: number, y: number, w: number, h: number) {
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

/** Dark modules as rectangles, one per horizontal run, filled as one path. Returns the module size. */
function drawQrVector(doc: Doc, payload: string, x: number, y: number, size: number): number {
	const qr = QRCode.create(payload, { errorCorrectionLevel: QR_LEVEL });
	const n = qr.modules.size;
	const data = qr.modules.data;
	const m = size / n;
	for (let r = 0; r < n; r++) {
		let c = 0;
		while (c < n) {
			if (!data[r * n + c]) {
				c++;
				continue;
			}
			const start = c;
			while (c < n && data[r * n + c]) c++;
			doc.rect(x + start * m, y + r * m, (c - start) * m, m);
		}
	}
	doc.fill(INK);
	return m;
}

async function drawQrRaster(doc: Doc, payload: string, x: number, y: number, size: number): Promise<number> {
	const png = await QRCode.toBuffer(payload, { errorCorrectionLevel: QR_LEVEL, margin: 0, scale: 8 });
	const n = QRCode.create(payload, { errorCorrectionLevel: QR_LEVEL }).modules.size;
	doc.image(png, x, y, { width: size, height: size });
	return size / n;
}

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
	fitLine(doc, isoDate(l.date), colX, cy, colW, 'label', 6, 5);
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

function assertLabel(l: LabelData) {
	const p = parseCode(l.code);
	if (!p.ok || p.code !== l.code) throw new RangeError(`label for "${l.code}": ${p.ok ? 'write the code in capitals' : p.reason}`);
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
					`Regolog labels · sheet ${pageNo} · ${sheet.cols} × ${sheet.rows} at 50.8 × 25.4 mm · offset ${offsetXmm >= 0 ? '+' : ''}${offsetXmm} / ${offsetYmm >= 0 ? '+' : ''}${offsetYmm} mm`,
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
