/**
 * The PDF summary of a blank-control report (pdfkit, Atkinson Hyperlegible embedded): what was
 * measured, the results table per analyte, the enantiomeric excesses, the flags in plain words,
 * the stated limitations, the methods with their sources, and the SHA-256 of the original file.
 */
import PDFDocument from 'pdfkit';
import { createRequire } from 'node:module';
import { readFileSync } from 'node:fs';
import { eeSentence, flagsOf, formatNumber, FLAG_LABELS, METHOD_NOTES } from '../../domain/blank-report';
import type { ReportView } from './service';

const requireHere = createRequire(import.meta.url);
let fonts: { regular: Buffer; bold: Buffer } | null = null;
function loadFonts() {
	if (!fonts) {
		const file = (w: number) => readFileSync(requireHere.resolve(`@fontsource/atkinson-hyperlegible/files/atkinson-hyperlegible-latin-${w}-normal.woff`));
		fonts = { regular: file(400), bold: file(700) };
	}
	return fonts;
}

/** The embedded font covers Latin: Greek letters and a few signs are written out. */
export function pdfText(s: string): string {
	return s.replace(/α/g, 'alpha').replace(/β/g, 'beta').replace(/γ/g, 'gamma').replace(/√/g, 'sqrt').replace(/≥/g, '>=').replace(/≤/g, '<=').replace(/×/g, 'x').replace(/b̄/g, 'b-mean').replace(/[^\u0000-\u00ff\u2010-\u2027\u2030-\u205e\u20ac\u2122\u2212]/g, '?');
}

export async function reportPdf(r: ReportView): Promise<Buffer> {
	const f = loadFonts();
	const doc = new PDFDocument({ size: 'A4', margin: 48, info: { Title: pdfText(`Blank-control report: ${r.title}`), Creator: 'Regolog' } });
	doc.registerFont('body', f.regular);
	doc.registerFont('bold', f.bold);
	const chunks: Buffer[] = [];
	doc.on('data', (c: Buffer) => chunks.push(c));
	const done = new Promise<Buffer>((resolve, reject) => {
		doc.on('end', () => resolve(Buffer.concat(chunks)));
		doc.on('error', reject);
	});
	const width = doc.page.width - 96;
	const text = (s: string, opts: PDFKit.Mixins.TextOptions = {}) => doc.text(pdfText(s), { width, ...opts });
	const heading = (s: string, size = 13) => {
		if (doc.y > doc.page.height - 120) doc.addPage();
		doc.moveDown(0.6).font('bold').fontSize(size);
		text(s);
		doc.font('body').fontSize(9.5).moveDown(0.2);
	};

	doc.font('bold').fontSize(18);
	text(`Blank-control report: ${r.title}`);
	doc.font('body').fontSize(9.5).moveDown(0.3);
	text(`${r.lab.name} · uploaded by ${r.createdBy ?? 'unknown'} on ${r.createdAt.slice(0, 16).replace('T', ' ')} UTC · Regolog`);
	text(`Original file: ${r.document.name}, ${r.document.sizeBytes} bytes, SHA-256 ${r.document.sha256}`);
	const samples = r.items.filter((i) => i.role === 'sample').map((i) => i.code);
	const blanks = r.items.filter((i) => i.role === 'blank').map((i) => i.code);
	text(`Analysed: ${samples.join(', ')} · Blanks: ${blanks.join(', ')}`);
	for (const n of r.notes) text(`Note: ${n}`);

	const cols = [
		{ h: 'Sample', w: 78 },
		{ h: 'Part', w: 28 },
		{ h: 'Signal', w: 62 },
		{ h: 'Blank mean', w: 50 },
		{ h: 's_b (n)', w: 50 },
		{ h: 'LOD', w: 42 },
		{ h: 'LOQ', w: 42 },
		{ h: 'Corrected', w: 64 },
		{ h: 'Flags', w: width - 416 }
	];
	const row = (cells: string[], bold = false) => {
		if (doc.y > doc.page.height - 70) doc.addPage();
		const y = doc.y;
		let x = 48;
		let h = 0;
		doc.font(bold ? 'bold' : 'body').fontSize(8);
		cells.forEach((c, i) => {
			doc.text(pdfText(c), x, y, { width: cols[i].w - 4 });
			h = Math.max(h, doc.y - y);
			x += cols[i].w;
		});
		doc.x = 48;
		doc.y = y + h + 3;
		doc.moveTo(48, doc.y - 1.5).lineTo(48 + width, doc.y - 1.5).lineWidth(0.3).strokeColor('#b3afa2').stroke();
	};

	for (const a of r.results.analytes) {
		heading(`${a.analyte}${a.aminoAcid ? ` (${a.aminoAcid.abbreviation}, ${a.aminoAcid.kind} amino acid)` : ''} · ${a.unit}`);
		row(cols.map((c) => c.h), true);
		for (const s of a.samples) {
			for (const p of s.parts) {
				const b = p.result.blank;
				const flags = flagsOf(s, a.analyte).filter((fl) => fl.part === p.key).map((fl) => FLAG_LABELS[fl.code]);
				row([
					s.code,
					p.key === 'total' ? '' : p.key,
					`${formatNumber(p.signal.value)}${p.signal.u != null ? ` ± ${formatNumber(p.signal.u)}` : ''}`,
					formatNumber(b.mean),
					`${formatNumber(b.sd)} (${b.n})`,
					formatNumber(b.lod),
					formatNumber(b.loq),
					`${formatNumber(p.result.corrected.value)}${p.result.corrected.u != null ? ` ± ${formatNumber(p.result.corrected.u)}` : ''}`,
					flags.join(', ') || '—'
				]);
			}
		}
		doc.moveDown(0.3).fontSize(9.5).font('body');
		for (const s of a.samples) {
			const ee = eeSentence(s, a.analyte);
			if (ee) text(ee);
			for (const fl of flagsOf(s, a.analyte)) text(`• ${fl.text}`);
			for (const l of s.limitations) text(`Limitation (${s.code}): ${l}`);
		}
	}

	heading('How these numbers are computed', 11);
	for (const m of METHOD_NOTES) text(`• ${m}`);
	doc.moveDown(0.5).fontSize(8).fillColor('#6f6a5c');
	text('Values ± are standard uncertainties (k = 1). Nothing is converted between units.');
	doc.end();
	return done;
}
