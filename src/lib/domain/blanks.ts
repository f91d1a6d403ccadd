/**
 * Blank-control results and enantiomeric excess (DESIGN.md §3.7–3.8).
 *
 * Values are abundances in one unit per analyte (the unit is the caller's; nothing here converts).
 * Uncertainties are standard uncertainties in the same unit. Pure TypeScript: no database,
 * framework or Node-only import, so a report's preview and the server's stored results agree.
 */

export interface Measurement {
	value: number;
	/** standard uncertainty; null or absent when not known */
	u?: number | null;
}

/** Settings of the flags. Neither share has a single published source: they are common practice, and settings. */
export interface BlankSettings {
	/** blank-dominated when the blank mean is above this share of the sample signal (default 0.5) */
	blankDominatedShare: number;
	/** a protein amino acid's L-excess is flagged as possible contamination at or above this blank share (default 0.1) */
	highBlankShare: number;
}

export const DEFAULT_BLANK_SETTINGS: Readonly<BlankSettings> = { blankDominatedShare: 0.5, highBlankShare: 0.1 };

export const LIMITATIONS = {
	noBlank: 'No blank was measured: nothing can be blank-corrected.',
	lodFromOneBlank: 'LOD cannot be estimated from one blank.',
	loqFromOneBlank: 'LOQ cannot be estimated from one blank.',
	uFromOneBlank: 'The blank’s spread cannot be estimated from one blank, so the blank-corrected value has no stated uncertainty.',
	noSampleU: 'The sample value has no stated uncertainty, so the blank-corrected value has none either.',
	eeSumZero: 'L + D is zero after blank correction: neither enantiomer is above the blank, so ee is not defined.',
	eeNegative: 'A blank-corrected abundance is negative (below the blank), so ee is not defined; report a limit instead.',
	eeNoU: 'An enantiomer has no stated uncertainty, so the uncertainty of ee and its significance cannot be given.',
	achiral: 'This amino acid is achiral: it has no enantiomers and no ee.',
	unknownAminoAcid: 'This analyte is not in Regolog’s amino-acid list, so the contamination check does not apply.'
} as const;

function finite(x: number, what: string): number {
	if (!Number.isFinite(x)) throw new RangeError(`${what} must be a finite number, got ${x}`);
	return x;
}

function uncertainty(u: number | null | undefined, what: string): number | null {
	if (u === null || u === undefined) return null;
	if (!Number.isFinite(u) || u < 0) throw new RangeError(`${what} must be a finite number ≥ 0, got ${u}`);
	return u;
}

/** Arithmetic mean. */
export function mean(values: readonly number[]): number {
	if (values.length === 0) throw new RangeError('the mean of no values is not defined');
	let sum = 0;
	for (const v of values) sum += finite(v, 'value');
	return sum / values.length;
}

/**
 * Sample (experimental) standard deviation s = √(Σ(xᵢ − x̄)²/(n − 1)) (JCGM 100:2008, 4.2.2),
 * computed in two passes for numerical stability. Needs at least two values.
 */
export function sampleStandardDeviation(values: readonly number[]): number {
	if (values.length < 2) throw new RangeError('a sample standard deviation needs at least two values');
	const m = mean(values);
	let ss = 0;
	for (const v of values) ss += (v - m) * (v - m);
	return Math.sqrt(ss / (values.length - 1));
}

/**
 * Mean of replicate measurements with the experimental standard deviation of the mean,
 * u = s/√n (JCGM 100:2008, 4.2.3); with one replicate the uncertainty is unknown (null).
 */
export function replicateMean(values: readonly number[]): Measurement {
	return { value: mean(values), u: values.length >= 2 ? sampleStandardDeviation(values) / Math.sqrt(values.length) : null };
}

export interface BlankStatistics {
	n: number;
	/** blank mean b̄; null without blanks */
	mean: number | null;
	/** sample standard deviation s_b; null with fewer than two blanks */
	sd: number | null;
	/** LOD = b̄ + 3·s_b; null when it cannot be estimated */
	lod: number | null;
	/** LOQ = b̄ + 10·s_b; null when it cannot be estimated */
	loq: number | null;
	limitations: string[];
}

/**
 * Blank mean b̄, sample standard deviation s_b, and the limits LOD = b̄ + 3·s_b and
 * LOQ = b̄ + 10·s_b (IUPAC: L. A. Currie, Pure Appl. Chem. 67 (1995) 1699; G. L. Long and
 * J. D. Winefordner, Anal. Chem. 55 (1983) 712A). With a single blank s_b is unknown and the
 * limits are not estimated: the result says so instead of giving a number.
 */
export function blankStatistics(values: readonly number[]): BlankStatistics {
	if (values.length === 0) return { n: 0, mean: null, sd: null, lod: null, loq: null, limitations: [LIMITATIONS.noBlank] };
	const m = mean(values);
	if (values.length === 1) {
		return { n: 1, mean: m, sd: null, lod: null, loq: null, limitations: [LIMITATIONS.lodFromOneBlank, LIMITATIONS.loqFromOneBlank] };
	}
	const sd = sampleStandardDeviation(values);
	return { n: values.length, mean: m, sd, lod: m + 3 * sd, loq: m + 10 * sd, limitations: [] };
}

export interface CorrectedValue {
	/** x − b̄; null without blanks */
	value: number | null;
	/** √(u_x² + s_b²/n_b); null when an input uncertainty is unknown */
	u: number | null;
	limitations: string[];
}

/**
 * Blank-corrected value x − b̄ with uncertainty √(u_x² + s_b²/n_b): first-order propagation of
 * independent inputs (JCGM 100:2008 (GUM), 5.1.2), with s_b/√n_b the standard uncertainty of the
 * blank mean (GUM 4.2.3).
 */
export function blankCorrected(x: Measurement, blank: BlankStatistics): CorrectedValue {
	const value = finite(x.value, 'sample value');
	const ux = uncertainty(x.u, 'sample uncertainty');
	if (blank.mean === null) return { value: null, u: null, limitations: [LIMITATIONS.noBlank] };
	const limitations: string[] = [];
	if (blank.sd === null) limitations.push(LIMITATIONS.uFromOneBlank);
	if (ux === null) limitations.push(LIMITATIONS.noSampleU);
	const u = blank.sd !== null && ux !== null ? Math.sqrt(ux * ux + (blank.sd * blank.sd) / blank.n) : null;
	return { value: value - blank.mean, u, limitations };
}

export interface AnalyteResult {
	signal: Measurement;
	blank: BlankStatistics;
	corrected: CorrectedValue;
	/** b̄ / x; null without blanks or when the signal is not positive */
	blankShare: number | null;
	flags: {
		/** x < LOD; null when LOD cannot be estimated */
		belowLod: boolean | null;
		/** x < LOQ; null when LOQ cannot be estimated */
		belowLoq: boolean | null;
		/** b̄ > share·x (BlankSettings.blankDominatedShare); null without blanks */
		blankDominated: boolean | null;
	};
	limitations: string[];
}

/**
 * One analyte of one sample against its blanks (DESIGN.md §3.7): blank statistics, the
 * blank-corrected value, and the flags below LOD, below LOQ and blank-dominated. The LOD and LOQ
 * are compared with the sample's measured signal, as in Currie (1995) and Long & Winefordner
 * (1983). The blank-dominated share is a setting (common practice, no single source).
 */
export function assessAnalyte(
	signal: Measurement,
	blanks: readonly number[] | BlankStatistics,
	settings: BlankSettings = DEFAULT_BLANK_SETTINGS
): AnalyteResult {
	const blank = Array.isArray(blanks) ? blankStatistics(blanks) : (blanks as BlankStatistics);
	const corrected = blankCorrected(signal, blank);
	const x = signal.value;
	const share = blank.mean !== null && x > 0 ? blank.mean / x : null;
	return {
		signal,
		blank,
		corrected,
		blankShare: share,
		flags: {
			belowLod: blank.lod === null ? null : x < blank.lod,
			belowLoq: blank.loq === null ? null : x < blank.loq,
			blankDominated: blank.mean === null ? null : blank.mean > settings.blankDominatedShare * x
		},
		limitations: [...new Set([...blank.limitations, ...corrected.limitations])]
	};
}

export interface EnantiomericExcess {
	/** (L − D)/(L + D) as a fraction (× 100 for %); null when not defined */
	ee: number | null;
	/** first-order standard uncertainty of ee; null when not known */
	u: number | null;
	/** |ee| > 2·u; null when u is unknown */
	significant: boolean | null;
	/** which enantiomer is in excess */
	excess: 'L' | 'D' | 'none' | null;
	limitations: string[];
}

/**
 * Enantiomeric excess ee = (L − D)/(L + D) of blank-corrected abundances (IUPAC Gold Book,
 * "enantiomer excess"; positive for an L-excess) with its first-order uncertainty
 * u_ee = 2·√(D²·u_L² + L²·u_D²)/(L + D)² (JCGM 100:2008, 5.1.2, independent L and D).
 * An excess is significant only when |ee| > 2·u_ee (coverage factor k = 2, GUM 6.2–6.3).
 * Not defined when L + D = 0 or a corrected abundance is negative.
 */
export function enantiomericExcess(l: Measurement, d: Measurement): EnantiomericExcess {
	const L = finite(l.value, 'L');
	const D = finite(d.value, 'D');
	const uL = uncertainty(l.u, 'u_L');
	const uD = uncertainty(d.u, 'u_D');
	const none = (why: string): EnantiomericExcess => ({ ee: null, u: null, significant: null, excess: null, limitations: [why] });
	if (L < 0 || D < 0) return none(LIMITATIONS.eeNegative);
	const sum = L + D;
	if (sum === 0) return none(LIMITATIONS.eeSumZero);
	const ee = (L - D) / sum;
	const excess = ee > 0 ? 'L' : ee < 0 ? 'D' : 'none';
	if (uL === null || uD === null) return { ee, u: null, significant: null, excess, limitations: [LIMITATIONS.eeNoU] };
	const u = (2 * Math.hypot(D * uL, L * uD)) / (sum * sum);
	return { ee, u, significant: Math.abs(ee) > 2 * u, excess, limitations: [] };
}

export type AminoAcidKind = 'protein' | 'non-protein';

export interface AminoAcid {
	name: string;
	abbreviation: string;
	kind: AminoAcidKind;
	/** false for glycine, α-aminoisobutyric acid, β-alanine, γ-aminobutyric acid: no enantiomers */
	chiral: boolean;
}

const aa = (name: string, abbreviation: string, kind: AminoAcidKind, chiral = true): AminoAcid => ({ name, abbreviation, kind, chiral });

/**
 * Protein (the twenty proteinogenic amino acids of the genetic code) and common non-protein
 * amino acids. Non-protein amino acids are rare in the biosphere, so they are the
 * contamination-resistant indicators: common practice in meteoritic amino-acid studies, not
 * one published list. Names, abbreviations and chirality are general chemistry, from memory.
 */
export const AMINO_ACIDS: readonly AminoAcid[] = [
	aa('glycine', 'Gly', 'protein', false),
	aa('alanine', 'Ala', 'protein'),
	aa('valine', 'Val', 'protein'),
	aa('leucine', 'Leu', 'protein'),
	aa('isoleucine', 'Ile', 'protein'),
	aa('proline', 'Pro', 'protein'),
	aa('phenylalanine', 'Phe', 'protein'),
	aa('tryptophan', 'Trp', 'protein'),
	aa('methionine', 'Met', 'protein'),
	aa('serine', 'Ser', 'protein'),
	aa('threonine', 'Thr', 'protein'),
	aa('cysteine', 'Cys', 'protein'),
	aa('tyrosine', 'Tyr', 'protein'),
	aa('asparagine', 'Asn', 'protein'),
	aa('glutamine', 'Gln', 'protein'),
	aa('aspartic acid', 'Asp', 'protein'),
	aa('glutamic acid', 'Glu', 'protein'),
	aa('lysine', 'Lys', 'protein'),
	aa('arginine', 'Arg', 'protein'),
	aa('histidine', 'His', 'protein'),
	aa('isovaline', 'Iva', 'non-protein'),
	aa('α-aminoisobutyric acid', 'AIB', 'non-protein', false),
	aa('norvaline', 'Nva', 'non-protein'),
	aa('norleucine', 'Nle', 'non-protein'),
	aa('α-aminobutyric acid', 'α-ABA', 'non-protein'),
	aa('β-aminoisobutyric acid', 'β-AIB', 'non-protein'),
	aa('β-alanine', 'β-Ala', 'non-protein', false),
	aa('γ-aminobutyric acid', 'GABA', 'non-protein', false)
];

function key(s: string): string {
	return s
		.normalize('NFKC')
		.toLowerCase()
		.replace(/\balpha\b/g, 'α')
		.replace(/\bbeta\b/g, 'β')
		.replace(/\bgamma\b/g, 'γ')
		.replace(/[\s_-]+/g, ' ')
		.replace(/([αβγ]) /g, '$1-')
		.trim();
}

const BY_KEY = new Map<string, AminoAcid>();
for (const a of AMINO_ACIDS) {
	BY_KEY.set(key(a.name), a);
	BY_KEY.set(key(a.abbreviation), a);
}

/** Looks an amino acid up by name or abbreviation ("Isovaline", "iva", "alpha-aminoisobutyric acid"); null when unknown. */
export function aminoAcid(nameOrAbbreviation: string): AminoAcid | null {
	return BY_KEY.get(key(nameOrAbbreviation)) ?? null;
}

export interface EnantiomerResult {
	analyte: string;
	aminoAcid: AminoAcid | null;
	L: AnalyteResult;
	D: AnalyteResult;
	ee: EnantiomericExcess;
	/** (b̄_L + b̄_D)/(x_L + x_D): the share of the measured signal the blanks account for */
	blankShare: number | null;
	flags: {
		/** an L-excess in a protein amino acid with blankShare ≥ highBlankShare; null when it cannot be judged */
		possibleTerrestrialContamination: boolean | null;
	};
	limitations: string[];
}

/**
 * One chiral analyte of one sample (DESIGN.md §3.7–3.8): each enantiomer against its blanks,
 * ee of the blank-corrected abundances, and the possible-terrestrial-contamination flag for an
 * L-excess in a protein amino acid with a high blank share (terrestrial biology is L-dominated;
 * common practice, the threshold is a setting with no single published source).
 */
export function assessEnantiomers(
	analyte: string,
	l: { signal: Measurement; blanks: readonly number[] },
	d: { signal: Measurement; blanks: readonly number[] },
	settings: BlankSettings = DEFAULT_BLANK_SETTINGS
): EnantiomerResult {
	const acid = aminoAcid(analyte);
	const L = assessAnalyte(l.signal, l.blanks, settings);
	const D = assessAnalyte(d.signal, d.blanks, settings);
	const limitations = [...new Set([...L.limitations, ...D.limitations])];
	const bothCorrected = L.corrected.value !== null && D.corrected.value !== null;
	let ee: EnantiomericExcess;
	if (acid && !acid.chiral) ee = { ee: null, u: null, significant: null, excess: null, limitations: [LIMITATIONS.achiral] };
	else if (!bothCorrected) ee = { ee: null, u: null, significant: null, excess: null, limitations: [LIMITATIONS.noBlank] };
	else ee = enantiomericExcess({ value: L.corrected.value!, u: L.corrected.u }, { value: D.corrected.value!, u: D.corrected.u });
	for (const x of ee.limitations) if (!limitations.includes(x)) limitations.push(x);

	const signalSum = l.signal.value + d.signal.value;
	const blankShare = bothCorrected && signalSum > 0 ? (L.blank.mean! + D.blank.mean!) / signalSum : null;
	let possible: boolean | null;
	if (!acid) {
		possible = null;
		limitations.push(LIMITATIONS.unknownAminoAcid);
	} else if (acid.kind === 'non-protein' || !acid.chiral) possible = false;
	else if (ee.ee === null || blankShare === null) possible = null;
	else possible = ee.ee > 0 && blankShare >= settings.highBlankShare;
	return { analyte, aminoAcid: acid, L, D, ee, blankShare, flags: { possibleTerrestrialContamination: possible }, limitations };
}
