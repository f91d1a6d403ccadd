/**
 * The PDF summary of a blank-control report (pdfkit, Atkinson Hyperlegible embedded): what was
 * measured, the results table per analyte, the enantiomeric excesses, the flags in plain words,
 * the stated limitations, the methods with their sources, and the SHA-256 of the original file.
 */
import PDFDocument from 'pdfkit';
import { createRequire } from 'node:module';
import { readFileSync } from 'node:fs';
import { eeSentence, flagsOf, formatEe, formatInterval, formatK, formatNu, formatNumber, limitText, mcSentence, verdictOf, BLANK_KIND_LABELS, FLAG_LABELS } from '../../domain/blank-report';
import { ADJUSTMENT_LABELS } from '../../domain/coverage';
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

/** The embedded font covers Latin: Greek letters, subscripts and a few signs are written out. */
export function pdfText(s: string): string {
	const sub = '₀₁₂₃₄₅₆₇₈₉';
	return s
		.replace(/[₀-₉]/g, (c) => String(sub.indexOf(c)))
		.replace(/α/g, 'alpha').replace(/β/g, 'beta').replace(/γ/g, 'gamma').replace(/δ/g, 'delta').replace(/ν/g, 'nu').replace(/σ/g, 'sigma')
		.replace(/√/g, 'sqrt').replace(/≥/g, '>=').replace(/≤/g, '<=').replace(/≈/g, '~').replace(/∞/g, 'infinity').replace(/×/g, 'x')
		.replace(/b̄/g, 'b-mean').replace(/ū/g, 'u-mean').replace(/p̃/g, 'p-adj')
		.replace(/[^\u0000-\u00ff\u2010-\u2027\u2030-\u205e\u20ac\u2122\u2212]/g, '?');
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

	const settings = r.results.settings;
	text(`Settings: ${settings.limits === 'currie' ? 'Currie 1995 limits decide' : 'classical limits decide'} (both shown) · firm limits need ${settings.minBlanks} blanks · many ee at once: ${ADJUSTMENT_LABELS[settings.adjustment]} over ${r.results.eeTests} tests, alpha = 0.05 · 95 % intervals, k = t95(nu_eff). Computed from the stored table with the current rules.`);

	type Col = { h: string; w: number };
	const table = (cols: Col[], rows: string[][]) => {
		const total = cols.reduce((a, c) => a + c.w, 0);
		const line = (cells: string[], bold: boolean) => {
			if (doc.y > doc.page.height - 70) doc.addPage();
			const y = doc.y;
			let x = 48;
			let h = 0;
			doc.font(bold ? 'bold' : 'body').fontSize(7.5);
			cells.forEach((c, i) => {
				doc.text(pdfText(c), x, y, { width: (cols[i].w / total) * width - 4 });
				h = Math.max(h, doc.y - y);
				x += (cols[i].w / total) * width;
			});
			doc.x = 48;
			doc.y = y + h + 3;
			doc.moveTo(48, doc.y - 1.5).lineTo(48 + width, doc.y - 1.5).lineWidth(0.3).strokeColor('#b3afa2').stroke();
		};
		line(cols.map((c) => c.h), true);
		for (const row of rows) line(row, false);
		doc.font('body').fontSize(9.5);
	};

	const eeRows = r.results.analytes.flatMap((a) => a.samples.filter((s) => s.ee && s.ee.status !== 'achiral').map((s) => ({ a, s, ee: s.ee! })));
	if (eeRows.length) {
		heading('Enantiomeric excess');
		const status: Record<string, string> = { quantified: 'quoted', semi_quantitative: 'semi-quantitative', not_quantifiable: 'not quantifiable', not_assessable: 'not assessable' };
		table(
			[{ h: 'Analyte', w: 60 }, { h: 'Sample', w: 62 }, { h: 'Status', w: 58 }, { h: 'ee', w: 36 }, { h: 'u', w: 30 }, { h: 'nu_eff', w: 28 }, { h: 'k', w: 26 }, { h: '95 % interval', w: 78 }, { h: 'Verdict', w: 60 }, { h: 'Adjusted', w: 70 }],
			eeRows.map(({ a, s, ee }) => {
				const v = verdictOf(ee);
				const fo = ee.ee !== null && ee.status !== 'semi_quantitative';
				return [a.analyte, s.code, status[ee.status] + (ee.weakLimits ? ' (weak limits)' : ''), ee.ee === null ? 'none quoted' : formatEe(ee.ee), fo ? formatEe(ee.u) : '—', fo ? formatNu(ee.nuEff) : '—', fo ? formatK(ee.k) : '—', ee.interval ? `${formatInterval(ee.interval)} ${ee.interval.source === 'monte-carlo' ? 'Monte-Carlo' : 'first-order'}` : '—', v.unadjusted, v.adjusted];
			})
		);
		doc.moveDown(0.3);
		for (const { a, s, ee } of eeRows) {
			text(`${a.analyte} · ${s.code}: ${ee.why} ${mcSentence(ee)}`);
		}
	}

	for (const a of r.results.analytes) {
		heading(`${a.analyte}${a.aminoAcid ? ` (${a.aminoAcid.abbreviation}, ${a.aminoAcid.kind} amino acid)` : ''} · ${a.unit}`);
		text(a.blankNote);
		doc.moveDown(0.2);
		table(
			[{ h: 'Part', w: 24 }, { h: 'Blank kind', w: 80 }, { h: 'n', w: 16 }, { h: 'b-mean', w: 40 }, { h: 's_b', w: 40 }, { h: 'LOD b+3s (Long & Winefordner)', w: 80 }, { h: 'LOQ b+10s', w: 70 }, { h: 'L_C / L_D / L_Q net (Currie 1995)', w: 110 }],
			a.blankKinds.map((b) => [
				b.key === 'total' ? '' : b.key,
				BLANK_KIND_LABELS[b.kind] + (b.used ? '' : ' (not used for correction)'),
				String(b.stats.n),
				formatNumber(b.stats.mean),
				formatNumber(b.stats.sd),
				b.stats.classical ? limitText({ ...b.stats, lod: b.stats.classical.lod }, 'lod') : limitText(b.stats, 'lod'),
				b.stats.classical ? limitText({ ...b.stats, loq: b.stats.classical.loq }, 'loq') : limitText(b.stats, 'loq'),
				b.stats.currie ? `${b.stats.weak ? 'weak: ~ ' : ''}${formatNumber(b.stats.currie.lc)} / ${formatNumber(b.stats.currie.ld)} / ${formatNumber(b.stats.currie.lq)} (sigma0 ${formatNumber(b.stats.currie.sigma0)}, t ${b.stats.currie.t.toFixed(2)}, delta ${b.stats.currie.delta.toFixed(2)})` : limitText(b.stats, 'lod')
			])
		);
		doc.moveDown(0.3);
		const level: Record<string, string> = { unknown: 'no limit', below_lod: 'below LOD', below_loq: 'LOD-LOQ', quantified: 'above LOQ' };
		table(
			[{ h: 'Sample', w: 62 }, { h: 'Part', w: 22 }, { h: 'Signal ± u', w: 70 }, { h: 'Corrected ± U', w: 70 }, { h: 'nu_eff', w: 28 }, { h: 'k', w: 26 }, { h: 'Limits', w: 50 }, { h: 'Blank share', w: 36 }, { h: 'Flags', w: 100 }],
			a.samples.flatMap((s) =>
				s.parts.map((p) => [
					s.code,
					p.key === 'total' ? '' : p.key,
					`${formatNumber(p.signal.value)}${p.signal.u != null ? ` ± ${formatNumber(p.signal.u)}` : ''}${p.replicates.length > 1 ? ` (n = ${p.replicates.length})` : ''}`,
					`${formatNumber(p.result.corrected.value)}${p.result.corrected.U != null ? ` ± ${formatNumber(p.result.corrected.U)}` : ''}`,
					formatNu(p.result.corrected.nuEff),
					formatK(p.result.corrected.k),
					level[p.result.level] + (p.result.flags.weakLimits ? ' (weak)' : ''),
					p.result.blankShare === null ? '—' : `${(p.result.blankShare * 100).toFixed(0)} %`,
					flagsOf(s, a.analyte, settings).filter((fl) => fl.part === p.key).map((fl) => FLAG_LABELS[fl.code]).join(', ') || '—'
				])
			)
		);
		doc.moveDown(0.3);
		for (const s of a.samples) {
			const ee = eeSentence(s, a.analyte);
			if (ee) text(ee);
			for (const fl of flagsOf(s, a.analyte, settings)) text(`• ${fl.text}`);
			for (const l of s.limitations) text(`Limitation (${s.code}): ${l}`);
		}
	}

	heading('How these numbers are computed', 11);
	for (const m of r.methodNotes) text(`• ${m}`);
	doc.moveDown(0.5).fontSize(8).fillColor('#6f6a5c');
	text('Signal ± u: standard uncertainty (k = 1). Corrected ± U: expanded uncertainty, U = k·u with k = t95(nu_eff). Nothing is converted between units.');
	doc.end();
	return done;
}
