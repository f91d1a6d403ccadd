/**
 * Regolog's blank-control table (layout "regolog-blank-control-1") and the results computed from
 * it with the blank statistics of DESIGN.md §3.7–3.8 (src/lib/domain/blanks.ts). Pure TypeScript:
 * the server computes and stores the results, the report page and the PDF explain them from here.
 */
import {
	aminoAcid,
	assessAnalyte,
	assessEnantiomers,
	blankStatistics,
	replicateMean,
	DEFAULT_BLANK_SETTINGS,
	type AnalyteResult,
	type BlankSettings,
	type BlankStatistics,
	type EnantiomericExcess,
	type Measurement
} from './blanks';

/** The columns, in order. `uncertainty` may be left out of the header. */
export const COLUMNS = ['analyte', 'enantiomer', 'sample_or_blank', 'replicate', 'value', 'unit', 'uncertainty'] as const;
export const OPTIONAL_COLUMNS: readonly string[] = ['uncertainty'];

/** What each column holds, for the template and the upload page. */
export const COLUMN_HELP: Record<(typeof COLUMNS)[number], string> = {
	analyte: 'the analyte, e.g. alanine, isovaline, aspartic acid (names or three-letter abbreviations)',
	enantiomer: 'L or D for a chiral analyte measured per enantiomer; empty for an achiral one or a total',
	sample_or_blank: 'the Regolog code of the analysed aliquot or of the blank item (procedural blank, witness coupon, tool rinse)',
	replicate: 'replicate number 1, 2, 3 … per analyte, enantiomer and item',
	value: 'the measured abundance, zero or more, with a decimal point; not blank-corrected',
	unit: 'the unit of the value, the same in every row of one analyte (e.g. nmol/g); nothing is converted',
	uncertainty: 'optional: the standard uncertainty of a single measurement, same unit'
};

export interface ParsedRow {
	/** line of the file (the header is line 1) */
	line: number;
	analyte: string;
	enantiomer: 'L' | 'D' | null;
	code: string;
	replicate: number;
	value: number;
	unit: string;
	uncertainty: number | null;
}

export interface RoleRow extends ParsedRow {
	role: 'sample' | 'blank';
}

export type PartKey = 'L' | 'D' | 'total';

export interface BlankPart {
	key: PartKey;
	values: number[];
	stats: BlankStatistics;
}

export interface SamplePart {
	key: PartKey;
	replicates: number[];
	signal: Measurement;
	result: AnalyteResult;
}

export interface SampleResult {
	code: string;
	parts: SamplePart[];
	ee: EnantiomericExcess | null;
	blankShare: number | null;
	possibleContamination: boolean | null;
	limitations: string[];
}

export interface AnalyteBlock {
	analyte: string;
	aminoAcid: { name: string; abbreviation: string; kind: 'protein' | 'non-protein'; chiral: boolean } | null;
	unit: string;
	perEnantiomer: boolean;
	blanks: BlankPart[];
	samples: SampleResult[];
}

export interface ReportResults {
	settings: BlankSettings;
	analytes: AnalyteBlock[];
	/** how many sample × analyte results carry at least one flag */
	flagged: number;
}

export function analyteKey(name: string): string {
	return aminoAcid(name)?.name ?? name.trim().toLowerCase().replace(/\s+/g, ' ');
}

const NOT_MEASURED = (code: string, missing: 'L' | 'D') => `${missing} was not measured for ${code}, so there is no enantiomeric excess.`;
const SAMPLE_U_FROM_REPLICATES = 'With two or more replicates the sample value is their mean and its uncertainty s/√n (JCGM 100:2008, 4.2.3); stated uncertainties are used only for single measurements.';

/** The sample's value: the replicate mean with s/√n, or the single value with its stated uncertainty. */
export function sampleSignal(rows: readonly RoleRow[]): Measurement {
	if (rows.length === 1) return { value: rows[0].value, u: rows[0].uncertainty };
	return replicateMean(rows.map((r) => r.value));
}

/**
 * Results per analyte and sample: blanks pooled over every blank item of the report per analyte
 * and enantiomer; each sample's replicates averaged; then assessAnalyte / assessEnantiomers.
 */
export function computeReport(rows: readonly RoleRow[], settings: BlankSettings = DEFAULT_BLANK_SETTINGS): ReportResults {
	const groups = new Map<string, RoleRow[]>();
	for (const r of rows) {
		const k = analyteKey(r.analyte);
		if (!groups.has(k)) groups.set(k, []);
		groups.get(k)!.push(r);
	}
	const analytes: AnalyteBlock[] = [];
	let flagged = 0;
	for (const [, group] of groups) {
		const acid = aminoAcid(group[0].analyte);
		const perEnantiomer = group[0].enantiomer !== null;
		const keys: PartKey[] = perEnantiomer ? ['L', 'D'] : ['total'];
		const keyOf = (r: RoleRow): PartKey => r.enantiomer ?? 'total';
		const blanks: BlankPart[] = keys.map((key) => {
			const values = group.filter((r) => r.role === 'blank' && keyOf(r) === key).map((r) => r.value);
			return { key, values, stats: blankStatistics(values) };
		});
		const blankValues = (key: PartKey) => blanks.find((b) => b.key === key)!.values;
		const codes = [...new Set(group.filter((r) => r.role === 'sample').map((r) => r.code))];
		const samples: SampleResult[] = [];
		for (const code of codes) {
			const mine = group.filter((r) => r.role === 'sample' && r.code === code);
			const present = keys.filter((k) => mine.some((r) => keyOf(r) === k));
			const signals = new Map(present.map((k) => [k, sampleSignal(mine.filter((r) => keyOf(r) === k))]));
			const replicates = (k: PartKey) => mine.filter((r) => keyOf(r) === k).map((r) => r.value);
			const extra: string[] = [];
			if (present.some((k) => replicates(k).length > 1 && mine.some((r) => keyOf(r) === k && r.uncertainty !== null))) extra.push(SAMPLE_U_FROM_REPLICATES);
			let s: SampleResult;
			if (perEnantiomer && present.length === 2) {
				const r = assessEnantiomers(group[0].analyte, { signal: signals.get('L')!, blanks: blankValues('L') }, { signal: signals.get('D')!, blanks: blankValues('D') }, settings);
				s = {
					code,
					parts: [
						{ key: 'L', replicates: replicates('L'), signal: signals.get('L')!, result: r.L },
						{ key: 'D', replicates: replicates('D'), signal: signals.get('D')!, result: r.D }
					],
					ee: r.ee,
					blankShare: r.blankShare,
					possibleContamination: r.flags.possibleTerrestrialContamination,
					limitations: [...r.limitations, ...extra]
				};
			} else {
				const parts = present.map((k) => ({ key: k, replicates: replicates(k), signal: signals.get(k)!, result: assessAnalyte(signals.get(k)!, blankValues(k), settings) }));
				const limitations = [...new Set(parts.flatMap((p) => p.result.limitations))];
				if (perEnantiomer) limitations.push(NOT_MEASURED(code, present[0] === 'L' ? 'D' : 'L'));
				s = { code, parts, ee: null, blankShare: parts.length === 1 ? parts[0].result.blankShare : null, possibleContamination: null, limitations: [...limitations, ...extra] };
			}
			if (flagsOf(s).length) flagged++;
			samples.push(s);
		}
		analytes.push({
			analyte: acid?.name ?? group[0].analyte,
			aminoAcid: acid ? { name: acid.name, abbreviation: acid.abbreviation, kind: acid.kind, chiral: acid.chiral } : null,
			unit: group[0].unit,
			perEnantiomer,
			blanks,
			samples
		});
	}
	return { settings: { ...settings }, analytes, flagged };
}

export type FlagCode = 'below_lod' | 'below_loq' | 'blank_dominated' | 'possible_contamination';

export interface Flag {
	code: FlagCode;
	part: PartKey | null;
	/** one sentence in plain words */
	text: string;
}

export const FLAG_LABELS: Record<FlagCode, string> = {
	below_lod: 'below LOD',
	below_loq: 'below LOQ',
	blank_dominated: 'blank-dominated',
	possible_contamination: 'possible terrestrial contamination'
};

const partName = (k: PartKey) => (k === 'total' ? '' : `${k}-`);
const pct = (x: number) => `${(x * 100).toFixed(0)} %`;

/** The flags of one sample result, each explained in plain words. */
export function flagsOf(s: SampleResult, analyte = 'the analyte'): Flag[] {
	const out: Flag[] = [];
	for (const p of s.parts) {
		const name = `${partName(p.key)}${analyte}`;
		const f = p.result.flags;
		if (f.belowLod) {
			out.push({ code: 'below_lod', part: p.key, text: `${name} in ${s.code} is below the detection limit: the signal cannot be told apart from the blanks with confidence, so it is not evidence that ${name} is present.` });
		} else if (f.belowLoq) {
			out.push({ code: 'below_loq', part: p.key, text: `${name} in ${s.code} is detected but below the quantification limit: it is present, but its amount is too uncertain to quote as a number.` });
		}
		if (f.blankDominated) {
			out.push({ code: 'blank_dominated', part: p.key, text: `The blanks account for ${pct(p.result.blankShare ?? 0)} of the ${name} signal in ${s.code} (more than ${pct(0.5)}): most of what was measured could come from the procedure rather than the sample.` });
		}
	}
	if (s.possibleContamination) {
		out.push({
			code: 'possible_contamination',
			part: null,
			text: `${s.code} shows ${s.ee?.significant ? 'a significant L-excess' : 'more L than D (not a significant excess)'} of ${analyte}, a protein amino acid, while the blanks account for ${pct(s.blankShare ?? 0)} of its signal: terrestrial biology makes L-amino acids, so the L-side may be contamination rather than an indigenous signal. Non-protein amino acids such as isovaline are the more reliable indicators.`
		});
	}
	return out;
}

/** One sentence on the enantiomeric excess, or null when there is none to speak of. */
export function eeSentence(s: SampleResult, analyte: string): string | null {
	if (!s.ee || s.ee.ee === null) return null;
	const v = `${(s.ee.ee * 100).toFixed(1)} %`;
	if (s.ee.u === null) return `ee of ${analyte} in ${s.code} is ${v}; its uncertainty is not known, so whether it is real cannot be said.`;
	const u = `${(s.ee.u * 100).toFixed(1)} %`;
	if (s.ee.significant) return `${analyte} in ${s.code} has an ${s.ee.excess}-excess of ${v} ± ${u} (standard uncertainty): larger than twice its uncertainty, so the excess is significant.`;
	return `ee of ${analyte} in ${s.code} is ${v} ± ${u}: within twice its uncertainty of zero, so no excess is shown.`;
}

/** The template offered for download: the header and a few example rows with invented codes. */
export function templateCsv(): string {
	const rows = [
		COLUMNS.join(','),
		'alanine,L,TRN-00011/?,1,12.4,nmol/g,0.6',
		'alanine,D,TRN-00011/?,1,9.8,nmol/g,0.5',
		'alanine,L,TRN-00041/?,1,0.9,nmol/g,',
		'alanine,D,TRN-00041/?,1,0.7,nmol/g,',
		'glycine,,TRN-00011/?,1,30.2,nmol/g,1.1',
		'glycine,,TRN-00041/?,1,2.1,nmol/g,'
	];
	return rows.join('\r\n') + '\r\n';
}

/** A value with three significant digits (no exponent between 0.001 and 10⁶); an em dash when absent. */
export function formatNumber(x: number | null | undefined): string {
	if (x === null || x === undefined || !Number.isFinite(x)) return '—';
	if (x === 0) return '0';
	const a = Math.abs(x);
	if (a >= 1e6 || a < 1e-3) return x.toExponential(2).replace('-', '−');
	return Number(x.toPrecision(3)).toString().replace('-', '−');
}

/** The methods behind the numbers, with their sources (DESIGN.md §3.7–3.8). */
export const METHOD_NOTES: readonly string[] = [
	'Blank mean b̄ and sample standard deviation s_b per analyte and enantiomer, pooled over every blank replicate of the report (JCGM 100:2008, 4.2.2).',
	'LOD = b̄ + 3·s_b and LOQ = b̄ + 10·s_b, compared with the measured sample signal (L. A. Currie, Pure Appl. Chem. 67 (1995) 1699; G. L. Long and J. D. Winefordner, Anal. Chem. 55 (1983) 712A). One blank replicate gives no s_b, so then no limit is estimated.',
	'Blank-corrected value x − b̄ with uncertainty √(u_x² + s_b²/n_b) (JCGM 100:2008, 5.1.2 and 4.2.3).',
	'Enantiomeric excess ee = (L − D)/(L + D) on blank-corrected abundances (IUPAC Gold Book, "enantiomer excess"), u_ee = 2·√(D²·u_L² + L²·u_D²)/(L + D)²; significant when |ee| > 2·u_ee.',
	'Blank-dominated: the blank mean is more than half the sample signal. Possible terrestrial contamination: an L-excess of a protein amino acid while the blanks account for 10 % or more of its signal. Both shares are settings, common practice rather than a published rule.'
];
