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
	noEe,
	replicateMean,
	seedOf,
	settingsOf,
	weakLimitsText,
	ALPHA,
	DEFAULT_BLANK_SETTINGS,
	EE_DELTA,
	LIMITATIONS,
	SOURCES,
	type AnalyteResult,
	type BlankSettings,
	type BlankStatistics,
	type EnantiomericExcess,
	type Measurement
} from './blanks';
import { adjustPValues, ADJUSTMENT_LABELS, MC_TRIALS } from './coverage';

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


/** The kinds of blank (DESIGN.md §2); 'blank' when the item's description names none of them. */
export type BlankKind = 'procedural_blank' | 'witness_coupon' | 'tool_rinse' | 'blank';

export const BLANK_KIND_LABELS: Record<BlankKind, string> = {
	procedural_blank: 'procedural blank',
	witness_coupon: 'witness coupon',
	tool_rinse: 'tool rinse',
	blank: 'blank of unstated kind'
};

/** The kind of a blank item, read from its description ("Procedural blank: …", "Witness coupon W1", "Rinse of tweezers"). */
export function blankKindOf(description: string | null | undefined): BlankKind {
	const d = (description ?? '').toLowerCase();
	if (/procedural/.test(d)) return 'procedural_blank';
	if (/witness|coupon/.test(d)) return 'witness_coupon';
	if (/rinse/.test(d)) return 'tool_rinse';
	return 'blank';
}

export interface RoleRow extends ParsedRow {
	role: 'sample' | 'blank';
	/** for a blank row: the kind of the blank item */
	blankKind?: BlankKind | null;
}

export type PartKey = 'L' | 'D' | 'total';

export interface BlankPart {
	key: PartKey;
	/** the blank replicates that correct the samples and set the limits */
	values: number[];
	stats: BlankStatistics;
	/** the kinds of blank these replicates come from; more than one: they were pooled */
	kinds: BlankKind[];
}

/** Every kind of blank of one analyte and part on its own, including those that do not correct the samples. */
export interface BlankKindPart {
	key: PartKey;
	kind: BlankKind;
	values: number[];
	stats: BlankStatistics;
	/** these replicates correct the samples */
	used: boolean;
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
	/** one entry per part: the blanks that correct the samples */
	blanks: BlankPart[];
	/** every kind of blank per part, each with its own statistics */
	blankKinds: BlankKindPart[];
	/** which blanks correct the samples, in words */
	blankNote: string;
	samples: SampleResult[];
}

export interface ReportResults {
	/** version of the rules the results were computed with */
	method: string;
	settings: BlankSettings;
	analytes: AnalyteBlock[];
	/** how many sample × analyte results carry at least one flag */
	flagged: number;
	/** the family of ee tests the adjustment runs over */
	eeTests: number;
}

/** The rules' version: results are computed on read with these rules, whatever was stored at upload. */
export const METHOD_VERSION = 'regolog-blank-method-2';

export function analyteKey(name: string): string {
	return aminoAcid(name)?.name ?? name.trim().toLowerCase().replace(/\s+/g, ' ');
}

const NOT_MEASURED = (code: string, missing: 'L' | 'D') => `${missing} was not measured for ${code}, so there is no enantiomeric excess.`;

/** The sample's value: the replicate mean with stated and observed uncertainty combined (replicateMean). */
export function sampleSignal(rows: readonly RoleRow[]): Measurement & { limitations: string[] } {
	return replicateMean(
		rows.map((r) => r.value),
		rows.map((r) => r.uncertainty)
	);
}

/**
 * Which blanks correct the samples of one part: the procedural blanks when there are any (they went
 * through the whole procedure with the samples); otherwise the only kind there is; otherwise every
 * kind pooled, and the note says which.
 */
function chooseBlanks(rows: readonly RoleRow[]): { kinds: BlankKind[]; pooled: boolean } {
	const kinds = [...new Set(rows.map((r) => r.blankKind ?? 'blank'))];
	if (kinds.includes('procedural_blank')) return { kinds: ['procedural_blank'], pooled: false };
	return { kinds, pooled: kinds.length > 1 };
}

/**
 * Results per analyte and sample: blank statistics per analyte, part and kind of blank; the
 * samples corrected with the blanks chooseBlanks picks; each sample's replicates combined by
 * replicateMean; then assessAnalyte / assessEnantiomers; finally the report's ee tests adjusted
 * together (Holm or Benjamini–Hochberg, a setting). Monte-Carlo seeds come from the analyte and
 * sample code, so the same table always gives the same numbers.
 */
export function computeReport(rows: readonly RoleRow[], stored: Partial<BlankSettings> = DEFAULT_BLANK_SETTINGS, opts: { trials?: number } = {}): ReportResults {
	const settings = settingsOf(stored);
	const groups = new Map<string, RoleRow[]>();
	for (const r of rows) {
		const k = analyteKey(r.analyte);
		if (!groups.has(k)) groups.set(k, []);
		groups.get(k)!.push(r);
	}
	const analytes: AnalyteBlock[] = [];
	for (const [, group] of groups) {
		const acid = aminoAcid(group[0].analyte);
		const name = acid?.name ?? group[0].analyte;
		const perEnantiomer = group[0].enantiomer !== null;
		const keys: PartKey[] = perEnantiomer ? ['L', 'D'] : ['total'];
		const keyOf = (r: RoleRow): PartKey => r.enantiomer ?? 'total';
		const blankKinds: BlankKindPart[] = [];
		const notes = new Set<string>();
		const blanks: BlankPart[] = keys.map((key) => {
			const mine = group.filter((r) => r.role === 'blank' && keyOf(r) === key);
			const { kinds, pooled } = chooseBlanks(mine);
			for (const kind of [...new Set(mine.map((r) => r.blankKind ?? 'blank'))]) {
				const values = mine.filter((r) => (r.blankKind ?? 'blank') === kind).map((r) => r.value);
				blankKinds.push({ key, kind, values, stats: blankStatistics(values, settings), used: kinds.includes(kind) });
			}
			const values = mine.filter((r) => kinds.includes(r.blankKind ?? 'blank')).map((r) => r.value);
			const all = [...new Set(mine.map((r) => r.blankKind ?? 'blank'))];
			if (pooled) notes.add(`No procedural blank was measured for ${name}; the ${kinds.map((k) => BLANK_KIND_LABELS[k] + 's').join(' and ')} were pooled to correct the samples.`);
			else if (all.length > kinds.length) notes.add(`The samples of ${name} are corrected with the procedural blanks alone; the ${all.filter((k) => !kinds.includes(k)).map((k) => BLANK_KIND_LABELS[k] + 's').join(' and ')} are shown on their own and not pooled with them.`);
			else if (kinds.length) notes.add(`The samples of ${name} are corrected with the ${BLANK_KIND_LABELS[kinds[0]]}s.`);
			return { key, values, stats: blankStatistics(values, settings), kinds };
		});
		const blankOf = (key: PartKey) => blanks.find((b) => b.key === key)!.stats;
		const codes = [...new Set(group.filter((r) => r.role === 'sample').map((r) => r.code))];
		const samples: SampleResult[] = [];
		for (const code of codes) {
			const mine = group.filter((r) => r.role === 'sample' && r.code === code);
			const present = keys.filter((k) => mine.some((r) => keyOf(r) === k));
			const signals = new Map(present.map((k) => [k, sampleSignal(mine.filter((r) => keyOf(r) === k))]));
			const replicates = (k: PartKey) => mine.filter((r) => keyOf(r) === k).map((r) => r.value);
			const extra = [...new Set([...signals.values()].flatMap((s) => s.limitations))];
			let s: SampleResult;
			if (perEnantiomer && present.length === 2) {
				const r = assessEnantiomers(group[0].analyte, { signal: signals.get('L')!, blanks: blankOf('L') }, { signal: signals.get('D')!, blanks: blankOf('D') }, settings, { seed: seedOf(`${name}|${code}`), trials: opts.trials });
				s = {
					code,
					parts: [
						{ key: 'L', replicates: replicates('L'), signal: signals.get('L')!, result: r.L },
						{ key: 'D', replicates: replicates('D'), signal: signals.get('D')!, result: r.D }
					],
					ee: r.ee,
					blankShare: r.blankShare,
					possibleContamination: r.flags.possibleTerrestrialContamination,
					limitations: [...new Set([...r.limitations, ...extra])]
				};
			} else {
				const parts = present.map((k) => ({ key: k, replicates: replicates(k), signal: signals.get(k)!, result: assessAnalyte(signals.get(k)!, blankOf(k), settings) }));
				const limitations = [...new Set(parts.flatMap((p) => p.result.limitations))];
				let ee: EnantiomericExcess | null = null;
				if (perEnantiomer) {
					const why = NOT_MEASURED(code, present[0] === 'L' ? 'D' : 'L');
					limitations.push(why);
					ee = noEe('not_assessable', why, parts.some((p) => p.result.flags.weakLimits));
				}
				s = { code, parts, ee, blankShare: parts.length === 1 ? parts[0].result.blankShare : null, possibleContamination: null, limitations: [...new Set([...limitations, ...extra])] };
			}
			samples.push(s);
		}
		analytes.push({
			analyte: name,
			aminoAcid: acid ? { name: acid.name, abbreviation: acid.abbreviation, kind: acid.kind, chiral: acid.chiral } : null,
			unit: group[0].unit,
			perEnantiomer,
			blanks,
			blankKinds,
			blankNote: [...notes].join(' '),
			samples
		});
	}
	// the family: every ee with a p-value in the report
	const tested = analytes.flatMap((a) => a.samples.map((s) => s.ee).filter((e): e is EnantiomericExcess => e !== null && e.p !== null));
	const adjusted = adjustPValues(tested.map((e) => e.p!), settings.adjustment);
	tested.forEach((e, i) => (e.adjusted = { method: settings.adjustment, p: adjusted[i], significant: settings.adjustment === 'none' ? e.significant! : e.significant! && adjusted[i] <= ALPHA }));
	let flagged = 0;
	for (const a of analytes) for (const s of a.samples) if (flagsOf(s, a.analyte, settings).length) flagged++;
	return { method: METHOD_VERSION, settings, analytes, flagged, eeTests: tested.length };
}

export type FlagCode = 'below_lod' | 'below_loq' | 'blank_dominated' | 'possible_contamination' | 'weak_limits' | 'not_quantifiable' | 'semi_quantitative';

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
	possible_contamination: 'possible terrestrial contamination',
	weak_limits: 'weak limits',
	not_quantifiable: 'ee not quantifiable',
	semi_quantitative: 'ee semi-quantitative'
};

const partName = (k: PartKey) => (k === 'total' ? '' : `${k}-`);
const pct = (x: number) => `${(x * 100).toFixed(0)} %`;

/** The flags of one sample result, each explained in plain words; the shares come from the report's settings. */
export function flagsOf(s: SampleResult, analyte = 'the analyte', settings: Partial<BlankSettings> = DEFAULT_BLANK_SETTINGS): Flag[] {
	const set = { ...DEFAULT_BLANK_SETTINGS, ...settings };
	const out: Flag[] = [];
	for (const p of s.parts) {
		const name = `${partName(p.key)}${analyte}`;
		const f = p.result.flags;
		const weak = f.weakLimits ? ' (the limit is weak: few blanks)' : '';
		if (f.belowLod) {
			out.push({ code: 'below_lod', part: p.key, text: `${name} in ${s.code} is below the detection limit${weak}: the signal cannot be told apart from the blanks with confidence, so it is not evidence that ${name} is present.` });
		} else if (f.belowLoq) {
			out.push({ code: 'below_loq', part: p.key, text: `${name} in ${s.code} is detected but below the quantification limit${weak}: it is present, but its amount is too uncertain to quote as a plain number.` });
		}
		if (f.weakLimits) {
			out.push({ code: 'weak_limits', part: p.key, text: `The limits for ${name} rest on ${p.result.blank.n} blank replicate${p.result.blank.n === 1 ? '' : 's'}${p.result.blank.strength === 'no-scatter' ? ' that agree exactly' : ''}, fewer than the ${set.minBlanks} the report asks for: decisions on them are weak.` });
		}
		if (f.blankDominated) {
			out.push({ code: 'blank_dominated', part: p.key, text: `The blanks account for ${pct(p.result.blankShare ?? 0)} of the ${name} signal in ${s.code} (more than ${pct(set.blankDominatedShare)}): most of what was measured could come from the procedure rather than the sample.` });
		}
	}
	if (s.ee?.status === 'not_quantifiable') out.push({ code: 'not_quantifiable', part: null, text: `${analyte} in ${s.code}: ${s.ee.why}` });
	if (s.ee?.status === 'semi_quantitative') out.push({ code: 'semi_quantitative', part: null, text: `${analyte} in ${s.code}: ${s.ee.why}` });
	if (s.possibleContamination) {
		const what = s.ee?.ee != null ? (s.ee.significant ? 'a significant L-excess' : 'more L than D (not a significant excess)') : 'L-enantiomer detected without its D-enantiomer';
		out.push({
			code: 'possible_contamination',
			part: null,
			text: `${s.code} shows ${what} of ${analyte}, a protein amino acid, while the blanks account for ${pct(s.blankShare ?? 0)} of its signal (the report flags ${pct(set.highBlankShare)} or more): terrestrial biology makes L-amino acids, so the L-side may be contamination rather than an indigenous signal. Non-protein amino acids such as isovaline are the more reliable indicators.`
		});
	}
	return out;
}

/** ee as a percentage with one decimal (the digits the report prints; δ = 0.05 % in the Monte-Carlo check). */
export function formatEe(x: number | null | undefined): string {
	if (x === null || x === undefined || !Number.isFinite(x)) return '—';
	return `${(x * 100).toFixed(1).replace('-', '−')} %`;
}

/** ν_eff as printed: the whole number below (JCGM 100:2008, G.4.1), or ∞. */
export function formatNu(nu: number | null | undefined): string {
	if (nu === null || nu === undefined) return '—';
	if (!Number.isFinite(nu) || nu > 1e7) return '∞';
	return String(Math.floor(nu));
}

/** k with three significant digits. */
export function formatK(k: number | null | undefined): string {
	return k === null || k === undefined ? '—' : k.toFixed(2);
}

/** The 95 % interval of an ee in words: "[1.2 %, 8.4 %]". */
export function formatInterval(i: { low: number; high: number } | null): string {
	return i ? `[${formatEe(i.low)}, ${formatEe(i.high)}]` : '—';
}

/** The verdict on an ee in a few words, unadjusted and adjusted. */
export function verdictOf(ee: EnantiomericExcess | null): { unadjusted: string; adjusted: string } {
	if (!ee || ee.significant === null) return { unadjusted: 'no verdict', adjusted: 'no verdict' };
	const word = (sig: boolean) => (sig ? `significant ${ee.excess}-excess` : 'no excess shown');
	const unadjusted = word(ee.significant);
	if (!ee.adjusted || ee.adjusted.method === 'none') return { unadjusted, adjusted: 'not adjusted' };
	return { unadjusted, adjusted: `${word(ee.adjusted.significant)} (${ee.adjusted.method === 'holm' ? 'Holm' : 'B–H'}, p̃ ${ee.adjusted.p < 0.001 ? '< 0.001' : `= ${ee.adjusted.p.toFixed(3)}`})` };
}

/** The Monte-Carlo run of an ee and its §8 check in one sentence; empty when none ran. */
export function mcSentence(ee: EnantiomericExcess | null): string {
	const m = ee?.mc;
	if (!m) return '';
	const v = m.validation;
	// the differences are printed one digit finer than ee, so they can be read against δ = 0.05 %
	const fine = (x: number) => `${(x * 100).toFixed(2)} %`;
	return `Monte-Carlo (${m.trials.toLocaleString('en')} trials): ${formatInterval(m)}${v ? `; first-order endpoints differ from it by ${fine(v.dLow)} and ${fine(v.dHigh)}, tolerance δ = ${fine(v.delta)}: first-order ${v.validated ? 'validated' : 'not validated'}` : ''}.`;
}

/** One sentence on the enantiomeric excess, or null when there is none to speak of. */
export function eeSentence(s: SampleResult, analyte: string): string | null {
	const e = s.ee;
	if (!e || e.status === 'achiral') return null;
	if (e.ee === null) return `${analyte} in ${s.code}: no ee is quoted. ${e.why}`;
	const v = verdictOf(e);
	const interval = `95 % interval ${formatInterval(e.interval)} (${e.interval?.source === 'monte-carlo' ? 'Monte-Carlo, JCGM 101:2008' : `first-order, ν_eff = ${formatNu(e.nuEff)}, k = ${formatK(e.k)}`})`;
	const semi = e.status === 'semi_quantitative' ? 'semi-quantitative ' : '';
	const adj = e.adjusted && e.adjusted.method !== 'none' ? `; after ${e.adjusted.method === 'holm' ? 'Holm' : 'Benjamini–Hochberg'} adjustment over the report's ee tests: ${e.adjusted.significant ? 'still significant' : 'not significant'}` : '';
	return `${analyte} in ${s.code}: ${semi}ee ${formatEe(e.ee)}, ${interval}: ${v.unadjusted}${adj}.${e.weakLimits ? ' The limits behind it are weak.' : ''}`;
}

/** A limit as the report prints it: a plain number only when it rests on enough blanks; weak ones in words. */
export function limitText(stats: BlankStatistics, which: 'lod' | 'loq'): string {
	if (stats.n === 0) return 'no blank';
	if (stats.n === 1) return 'no limit (1 blank)';
	const v = stats[which];
	if (stats.weak) return `weak: ≈ ${formatNumber(v)} from ${stats.n} blanks${stats.strength === 'no-scatter' ? ' without scatter' : ''}`;
	return formatNumber(v);
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

/** The methods behind the numbers, with their sources and every assumption (DESIGN.md §3.7–3.8), for the report's settings. */
export function methodNotes(stored: Partial<BlankSettings> = DEFAULT_BLANK_SETTINGS): string[] {
	const s = settingsOf(stored);
	return [
		`Blanks are kept apart by kind (procedural blank, witness coupon, tool rinse, read from the blank item's description). The samples are corrected with the procedural blanks when there are any; otherwise with the one kind there is, or with all kinds pooled, and the report says which. Blank mean b̄ and sample standard deviation s_b per analyte and enantiomer (${SOURCES.gum}, 4.2.2).`,
		`A replicate mean's standard uncertainty combines, never replaces: u² = ū_stated² + s²/n. The stated per-measurement uncertainty (root mean square of the rows' uncertainties) is a Type B component taken as known (ν = ∞) and is not divided by √n, because part of it (calibration, response factors) is common to all replicates; the scatter of the mean s/√n is a Type A component with ν = n − 1 (${SOURCES.gum}, 4.2.3 and 4.3). This is conservative when the stated uncertainty is pure repeatability. Identical replicates with no stated uncertainty give no uncertainty rather than zero.`,
		`Blank-corrected value x − b̄ with u² = u_x² + s_b²·(1 + 1/n_b): the blank mean's uncertainty s_b²/n_b and the sample's own blank, one more draw from the blank population, s_b². This is Currie's σ₀² and so treats s_b exactly as the detection limits do. Inputs are taken as independent (${SOURCES.gum}, 5.1.2); the L and D blanks are taken as independent of each other.`,
		`Effective degrees of freedom by Welch–Satterthwaite over every component (${SOURCES.gum}, G.4.1), truncated to the whole number below; expanded uncertainty U = k·u with k = t₉₅(ν_eff), Student's t from the jstat library (${SOURCES.gum}, G.3–G.4, Table G.2). Every interval is a 95 % interval.`,
		`Classical limits LOD = b̄ + 3·s_b and LOQ = b̄ + 10·s_b (${SOURCES.classical}). Currie's limits in the blank-corrected domain: σ₀ = s_b·√(1 + 1/n_b), critical level L_C = t₀.₉₅(ν)·σ₀, detection limit L_D = δ·σ₀ with δ the non-centrality of the non-central t for α = β = ${ALPHA} and ν = n_b − 1, quantification limit L_Q = 10·σ₀ (${SOURCES.currie}), never taken below L_D (with two blanks δ ≈ 12.5). Both are shown; ${s.limits === 'currie' ? 'Currie’s' : 'the classical'} limits decide "below LOD" and "below LOQ" in this report. A blank-corrected value ≤ 0 is below LOD whatever the limits.`,
		`Fewer than ${s.minBlanks} blank replicates (a setting), or blanks without scatter: the limits are weak, printed in words, and every decision on them says so; with 2–4 blanks the real false-detection rate of "x > b̄ + 3·s_b" is many times the nominal one. One blank: no limit, no blank scatter, no ee.`,
		`Enantiomeric excess ee = (L − D)/(L + D) on blank-corrected abundances (IUPAC Gold Book, "enantiomer excess"), u_ee = 2·√(D²·u_L² + L²·u_D²)/(L + D)², first order. An ee is quoted only when both enantiomers are above their LOD. Below LOD (or ≤ 0): "not quantifiable", with the detected enantiomer alone and, from the other's detection limit, a lower bound on the excess. Between LOD and LOQ: semi-quantitative, quoted only with its Monte-Carlo interval. An excess is significant when its 95 % interval excludes zero.`,
		`Monte-Carlo propagation after GUM Supplement 1 (${SOURCES.mc}) for every ee with an enantiomer below twice its LOQ: ${MC_TRIALS.toLocaleString('en')} trials, each input its estimate plus a Gaussian (stated components) or scaled t (Type A components, ν = n − 1) draw, a seeded generator (the same table gives the same interval), the probabilistically symmetric 95 % interval. The first-order interval is validated as in ${SOURCES.mc} §8: both endpoints within δ = ${(EE_DELTA * 100).toFixed(2)} % (half a unit of the printed digit); when it fails, the Monte-Carlo interval is used.`,
		`A report tests many ee at once. Multiple-comparison control: ${ADJUSTMENT_LABELS[s.adjustment]}${s.adjustment === 'holm' ? ' (S. Holm, Scand. J. Statist. 6 (1979) 65)' : s.adjustment === 'bh' ? ' (Y. Benjamini and Y. Hochberg, J. R. Statist. Soc. B 57 (1995) 289)' : ''} over every ee of the report with a p-value, at α = ${ALPHA}; the adjusted verdict is shown beside the unadjusted one.`,
		`Blank-dominated: the blank mean is more than ${pct(s.blankDominatedShare)} of the sample signal. Possible terrestrial contamination: an L-excess (or L detected without D) of a protein amino acid while the blanks account for ${pct(s.highBlankShare)} or more of its signal. Both shares are settings, common practice rather than a published rule.`
	];
}

/** The method notes with the default settings. */
export const METHOD_NOTES: readonly string[] = methodNotes();

export { LIMITATIONS, weakLimitsText };
