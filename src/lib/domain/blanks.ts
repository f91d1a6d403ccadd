/**
 * Blank-control results and enantiomeric excess (DESIGN.md §3.7–3.8).
 *
 * Values are abundances in one unit per analyte (the unit is the caller's; nothing here converts).
 * Uncertainties are standard uncertainties in the same unit. Pure TypeScript: no database,
 * framework or Node-only import, so a report's preview and the server's results agree.
 *
 * The rules, each stated once here and repeated in words in the report's method notes
 * (blank-report.ts, methodNotes):
 * - A replicate mean's standard uncertainty combines, never replaces: u² = ū_stated² + s²/n, the
 *   stated per-measurement uncertainty as a Type B component (JCGM 100:2008, 4.3; taken as known,
 *   ν = ∞, and not divided by √n, since Regolog cannot tell which part of it averages out) and the
 *   observed scatter of the mean as a Type A component (4.2.3; ν = n − 1).
 * - The blank-corrected value x − b̄ carries the blank scatter twice, as Currie's net signal does:
 *   once for the uncertainty of the blank mean (s_b²/n_b) and once for the sample's own blank,
 *   which is one more draw from the blank population (s_b²); together σ₀² = s_b²·(1 + 1/n_b), the
 *   same σ₀ as in the detection limits below, with ν = n_b − 1.
 * - Effective degrees of freedom by Welch–Satterthwaite (G.4.1), k = t₉₅(ν_eff) (Table G.2), and
 *   significance decided on the 95 % interval.
 */
import {
	combined,
	coverageFactor,
	monteCarlo,
	numericalTolerance,
	tDeviate,
	tQuantile,
	twoSidedP,
	validateFirstOrder,
	welchSatterthwaite,
	type Adjustment,
	type Component,
	type MonteCarloResult,
	type Validation
} from './coverage';
import jstat from 'jstat';

const { jStat } = jstat;

export type { Component } from './coverage';

export interface Measurement {
	value: number;
	/** standard uncertainty; null or absent when not known */
	u?: number | null;
	/** the contributions to u with their degrees of freedom; absent: u is one stated component with ν = ∞ */
	components?: Component[];
	/** Welch–Satterthwaite ν_eff of u */
	nuEff?: number | null;
}

export type LimitSystem = 'currie' | 'classical';

/** Settings of a report. The shares have no single published source: they are common practice, and settings. */
export interface BlankSettings {
	/** blank-dominated when the blank mean is above this share of the sample signal (default 0.5) */
	blankDominatedShare: number;
	/** a protein amino acid's L-excess is flagged as possible contamination at or above this blank share (default 0.1) */
	highBlankShare: number;
	/** fewer blank replicates than this make the limits weak (default 3); one blank gives no limit at all */
	minBlanks: number;
	/** which limits decide below LOD / below LOQ (both are always shown) */
	limits: LimitSystem;
	/** control of many ee tests at once */
	adjustment: Adjustment;
}

export const DEFAULT_BLANK_SETTINGS: Readonly<BlankSettings> = { blankDominatedShare: 0.5, highBlankShare: 0.1, minBlanks: 3, limits: 'currie', adjustment: 'holm' };

/** Significance level of every test and the α = β of Currie's limits. */
export const ALPHA = 0.05;

/** Settings as stored (older reports stored only the two shares), completed with the defaults and checked. */
export function settingsOf(stored: Partial<BlankSettings> | null | undefined): BlankSettings {
	const s = { ...DEFAULT_BLANK_SETTINGS, ...(stored ?? {}) };
	if (!(s.blankDominatedShare > 0 && s.blankDominatedShare <= 1)) throw new RangeError(`blankDominatedShare must lie in (0, 1], got ${s.blankDominatedShare}`);
	if (!(s.highBlankShare > 0 && s.highBlankShare <= 1)) throw new RangeError(`highBlankShare must lie in (0, 1], got ${s.highBlankShare}`);
	if (!Number.isSafeInteger(s.minBlanks) || s.minBlanks < 2) throw new RangeError(`minBlanks must be a whole number of at least 2, got ${s.minBlanks}`);
	if (s.limits !== 'currie' && s.limits !== 'classical') throw new RangeError(`limits must be currie or classical, got ${s.limits}`);
	if (!['holm', 'bh', 'none'].includes(s.adjustment)) throw new RangeError(`adjustment must be holm, bh or none, got ${s.adjustment}`);
	return s;
}

export const SOURCES = {
	classical: 'G. L. Long and J. D. Winefordner, Anal. Chem. 55 (1983) 712A (the common k = 3 and k = 10 convention)',
	currie: 'L. A. Currie, Pure Appl. Chem. 67 (1995) 1699',
	gum: 'JCGM 100:2008',
	mc: 'JCGM 101:2008'
} as const;

export const LIMITATIONS = {
	noBlank: 'No blank was measured: nothing can be blank-corrected.',
	lodFromOneBlank: 'No detection or quantification limit can be estimated from one blank.',
	uFromOneBlank: 'The blank’s scatter cannot be estimated from one blank, so the blank-corrected value has no stated uncertainty.',
	noSampleU: 'The sample value has no stated uncertainty and no replicate scatter, so the blank-corrected value has no uncertainty either.',
	identicalReplicates: 'The replicates agree exactly and no uncertainty is stated: a scatter of zero is not taken as zero uncertainty.',
	noScatter: 'The blanks agree exactly, so their scatter is not estimated and the limits equal the blank mean: they are weak.',
	eeSumZero: 'L + D is zero after blank correction: ee is not defined.',
	eeNoU: 'An enantiomer has no uncertainty, so no interval and no verdict on ee can be given.',
	eeNoLimit: 'With one blank no detection limit can be estimated, so whether each enantiomer stands above its blank cannot be judged and no ee is quoted.',
	achiral: 'This amino acid is achiral: it has no enantiomers and no ee.',
	unknownAminoAcid: 'This analyte is not in Regolog’s amino-acid list, so the contamination check does not apply.'
} as const;

export const weakLimitsText = (n: number, min: number) =>
	`The limits rest on ${n} blank replicate${n === 1 ? '' : 's'}, fewer than the set minimum of ${min}: they are weak, and the real false-detection rate of a decision on them can be many times the nominal ${ALPHA * 100} %.`;

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

/** The components of a measurement: its own list, or its u as one stated component (ν = ∞). */
export function componentsOf(m: Measurement, source = 'stated uncertainty'): Component[] | null {
	if (m.components) return m.components;
	const u = uncertainty(m.u, 'uncertainty');
	return u === null ? null : [{ source, u, nu: Infinity }];
}

/**
 * Mean of replicate measurements (JCGM 100:2008, 4.2.1) with a standard uncertainty that combines
 * the stated per-measurement uncertainties (Type B, 4.3: their root mean square, ν = ∞, not divided
 * by √n) with the scatter of the mean (Type A, 4.2.3: s/√n, ν = n − 1): u² = ū_stated² + s²/n.
 * More replicates can shrink the Type A part but never the stated one. With one replicate u is its
 * stated uncertainty (or unknown); with identical replicates and nothing stated, u is unknown.
 */
export function replicateMean(values: readonly number[], stated: readonly (number | null | undefined)[] = []): Measurement & { limitations: string[] } {
	const n = values.length;
	const m = mean(values);
	const given = stated.map((u, i) => uncertainty(u, `uncertainty of replicate ${i + 1}`)).filter((u): u is number => u !== null);
	const components: Component[] = [];
	if (given.length) components.push({ source: 'stated uncertainty (Type B)', u: Math.sqrt(given.reduce((a, u) => a + u * u, 0) / given.length), nu: Infinity });
	if (n >= 2) components.push({ source: `replicate scatter s/√n, n = ${n} (Type A)`, u: sampleStandardDeviation(values) / Math.sqrt(n), nu: n - 1 });
	const u = combined(components);
	if (components.length === 0 || (u === 0 && given.length === 0)) {
		return { value: m, u: null, nuEff: null, limitations: n >= 2 ? [LIMITATIONS.identicalReplicates] : [] };
	}
	return { value: m, u, components, nuEff: welchSatterthwaite(components), limitations: [] };
}

export type LimitStrength = 'none' | 'single' | 'no-scatter' | 'weak' | 'adequate';

export interface CurrieLimits {
	/** σ₀ = s_b·√(1 + 1/n): the standard deviation of a net signal when the analyte is absent */
	sigma0: number;
	/** ν = n − 1 */
	nu: number;
	/** one-sided t_{1−α}(ν) */
	t: number;
	/** non-centrality δ_{α,β,ν} with L_D = δ·σ₀ */
	delta: number;
	/** critical level L_C = t·σ₀ (net signal): above it, the analyte is detected */
	lc: number;
	/** detection limit L_D = δ·σ₀ (net): the true net signal detected with probability 1 − β */
	ld: number;
	/** quantification limit L_Q = 10·σ₀ (net) */
	lq: number;
}

export interface BlankStatistics {
	n: number;
	/** blank mean b̄; null without blanks */
	mean: number | null;
	/** sample standard deviation s_b; null with fewer than two blanks */
	sd: number | null;
	strength: LimitStrength;
	/** the limits that decide (settings.limits) */
	used: LimitSystem;
	/** classical limits as gross signal levels, b̄ + 3·s_b and b̄ + 10·s_b (Long & Winefordner) */
	classical: { lod: number; loq: number } | null;
	/** Currie's limits in the net (blank-corrected) domain */
	currie: CurrieLimits | null;
	/** the used LOD and LOQ as gross signal levels (b̄ + net limit); null when they cannot be estimated */
	lod: number | null;
	loq: number | null;
	/** the used LOD and LOQ in the net (blank-corrected) domain */
	lodNet: number | null;
	loqNet: number | null;
	/** true when the limits are weak (fewer blanks than the set minimum, or no scatter among them) */
	weak: boolean;
	limitations: string[];
}

/**
 * δ_{α,β,ν}: the non-centrality parameter of the non-central t distribution with ν degrees of
 * freedom whose β-quantile is t_{1−α}(ν) (Currie 1995, the detection limit when σ is estimated),
 * found by bisection on jstat's non-central t. For ν → ∞ it tends to z_{1−α} + z_{1−β} = 3.29.
 */
export function currieDelta(nu: number, alpha = ALPHA, beta = ALPHA): number {
	const key = `${Math.floor(nu)}|${alpha}|${beta}`;
	let d = DELTAS.get(key);
	if (d === undefined) DELTAS.set(key, (d = solveDelta(nu, alpha, beta)));
	return d;
}

/** δ depends on ν, α and β alone: each is solved once. */
const DELTAS = new Map<string, number>();

function solveDelta(nu: number, alpha: number, beta: number): number {
	const t = tQuantile(1 - alpha, nu);
	if (!Number.isFinite(nu) || nu > 1e5) return t + tQuantile(1 - beta, Infinity);
	let lo = 0;
	let hi = 200;
	for (let i = 0; i < 80; i++) {
		const mid = (lo + hi) / 2;
		if (jStat.noncentralt.cdf(t, Math.floor(nu), mid) > beta) lo = mid;
		else hi = mid;
	}
	return (lo + hi) / 2;
}

/**
 * Currie's critical level and detection limit for a blank of standard deviation σ_B estimated
 * from n replicates (L. A. Currie, Pure Appl. Chem. 67 (1995) 1699): σ₀ = σ_B·√(1 + 1/n),
 * L_C = t_{1−α}(ν)·σ₀, L_D = δ_{α,β,ν}·σ₀, L_Q = 10·σ₀ (k_Q = 10), ν = n − 1, α = β = 0.05.
 */
export function currieLimits(sigmaB: number, n: number, alpha = ALPHA, beta = ALPHA): CurrieLimits {
	if (!Number.isSafeInteger(n) || n < 2) throw new RangeError(`Currie's limits need at least two blanks, got ${n}`);
	const sigma0 = finite(sigmaB, 'σ_B') * Math.sqrt(1 + 1 / n);
	const nu = n - 1;
	const t = tQuantile(1 - alpha, nu);
	const delta = currieDelta(nu, alpha, beta);
	return { sigma0, nu, t, delta, lc: t * sigma0, ld: delta * sigma0, lq: 10 * sigma0 };
}

/**
 * Blank mean b̄, sample standard deviation s_b and both sets of limits: the classical
 * LOD = b̄ + 3·s_b, LOQ = b̄ + 10·s_b (the common k = 3 convention; G. L. Long and J. D. Winefordner,
 * Anal. Chem. 55 (1983) 712A) and Currie's L_C, L_D, L_Q (currieLimits). One blank: no limit.
 * Fewer blanks than `minBlanks`, or blanks that agree exactly: the limits are weak.
 */
export function blankStatistics(values: readonly number[], settings: Pick<BlankSettings, 'minBlanks' | 'limits'> = DEFAULT_BLANK_SETTINGS): BlankStatistics {
	const none = { classical: null, currie: null, lod: null, loq: null, lodNet: null, loqNet: null, used: settings.limits };
	if (values.length === 0) return { n: 0, mean: null, sd: null, strength: 'none', weak: false, ...none, limitations: [LIMITATIONS.noBlank] };
	const m = mean(values);
	if (values.length === 1) return { n: 1, mean: m, sd: null, strength: 'single', weak: false, ...none, limitations: [LIMITATIONS.lodFromOneBlank] };
	const n = values.length;
	const sd = sampleStandardDeviation(values);
	const currie = currieLimits(sd, n);
	const classical = { lod: m + 3 * sd, loq: m + 10 * sd };
	const strength: LimitStrength = sd === 0 ? 'no-scatter' : n < settings.minBlanks ? 'weak' : 'adequate';
	const limitations: string[] = [];
	if (strength === 'no-scatter') limitations.push(LIMITATIONS.noScatter);
	if (n < settings.minBlanks) limitations.push(weakLimitsText(n, settings.minBlanks));
	const lodNet = settings.limits === 'currie' ? currie.ld : 3 * sd;
	// with very few blanks δ can exceed 10 (ν = 1: δ ≈ 12.5): a quantification limit is never taken below the detection limit
	const loqNet = settings.limits === 'currie' ? Math.max(currie.lq, currie.ld) : 10 * sd;
	return { n, mean: m, sd, strength, used: settings.limits, classical, currie, lod: m + lodNet, loq: m + loqNet, lodNet, loqNet, weak: strength !== 'adequate', limitations };
}

export interface CorrectedValue {
	/** x − b̄; null without blanks */
	value: number | null;
	/** √(u_x² + σ₀²), σ₀² = s_b²·(1 + 1/n_b); null when an input uncertainty is unknown */
	u: number | null;
	components: Component[] | null;
	/** Welch–Satterthwaite ν_eff (JCGM 100:2008, G.4.1) */
	nuEff: number | null;
	/** k = t₉₅(ν_eff) */
	k: number | null;
	/** expanded uncertainty U = k·u */
	U: number | null;
	limitations: string[];
}

/**
 * Blank-corrected value x − b̄ with uncertainty √(u_x² + s_b²·(1 + 1/n_b)): first-order
 * propagation of independent inputs (JCGM 100:2008, 5.1.2), counting the blank mean (s_b²/n_b) and
 * the sample's own blank (s_b²), as Currie's σ₀ does; ν_eff by Welch–Satterthwaite (G.4.1) and
 * k = t₉₅(ν_eff).
 */
export function blankCorrected(x: Measurement, blank: BlankStatistics): CorrectedValue {
	const value = finite(x.value, 'sample value');
	const xs = componentsOf(x, 'stated uncertainty of the sample');
	const empty = { u: null, components: null, nuEff: null, k: null, U: null };
	if (blank.mean === null) return { value: null, ...empty, limitations: [LIMITATIONS.noBlank] };
	const limitations: string[] = [];
	if (blank.sd === null) limitations.push(LIMITATIONS.uFromOneBlank);
	if (xs === null) limitations.push(LIMITATIONS.noSampleU);
	if (blank.sd === null || xs === null) return { value: value - blank.mean, ...empty, limitations };
	const components = [...xs, { source: `blank scatter σ₀ = s_b·√(1 + 1/n_b), n_b = ${blank.n}`, u: blank.sd * Math.sqrt(1 + 1 / blank.n), nu: blank.n - 1 }];
	const u = combined(components);
	const nuEff = welchSatterthwaite(components);
	const k = coverageFactor(nuEff);
	return { value: value - blank.mean, u, components, nuEff, k, U: k * u, limitations };
}

export type Level = 'unknown' | 'below_lod' | 'below_loq' | 'quantified';

export interface AnalyteResult {
	signal: Measurement;
	blank: BlankStatistics;
	corrected: CorrectedValue;
	/** b̄ / x; null without blanks or when the signal is not positive */
	blankShare: number | null;
	/** where the blank-corrected value stands against the used limits */
	level: Level;
	flags: {
		/** x − b̄ > L_C (Currie's detection decision); null when it cannot be decided */
		detected: boolean | null;
		/** x − b̄ below the used LOD, or ≤ 0; null when it cannot be decided */
		belowLod: boolean | null;
		/** x − b̄ below the used LOQ; null when LOQ cannot be estimated */
		belowLoq: boolean | null;
		/** b̄ > share·x (BlankSettings.blankDominatedShare); null without blanks */
		blankDominated: boolean | null;
		/** the limits behind belowLod / belowLoq are weak */
		weakLimits: boolean;
	};
	limitations: string[];
}

/**
 * One analyte of one sample against its blanks (DESIGN.md §3.7): blank statistics, the
 * blank-corrected value, and the flags below LOD, below LOQ and blank-dominated. The limits are
 * compared with the blank-corrected value (for the classical limits this is the same as comparing
 * the signal with b̄ + 3·s_b). A value ≤ 0 is below LOD whatever the limits. The blank-dominated
 * share is a setting (common practice, no single source).
 */
export function assessAnalyte(signal: Measurement, blanks: readonly number[] | BlankStatistics, settings: BlankSettings = DEFAULT_BLANK_SETTINGS): AnalyteResult {
	const blank = Array.isArray(blanks) ? blankStatistics(blanks, settings) : (blanks as BlankStatistics);
	const corrected = blankCorrected(signal, blank);
	const x = signal.value;
	const net = corrected.value;
	const share = blank.mean !== null && x > 0 ? blank.mean / x : null;
	const belowLod = net === null ? null : net <= 0 ? true : blank.lodNet === null ? null : net < blank.lodNet;
	const belowLoq = net === null || blank.loqNet === null ? (belowLod ? true : null) : net < blank.loqNet;
	const detected = net === null ? null : net <= 0 ? false : blank.currie === null ? null : net > blank.currie.lc;
	const level: Level = belowLod === null ? 'unknown' : belowLod ? 'below_lod' : belowLoq ? 'below_loq' : 'quantified';
	return {
		signal,
		blank,
		corrected,
		blankShare: share,
		level,
		flags: { detected, belowLod, belowLoq, blankDominated: blank.mean === null ? null : blank.mean > settings.blankDominatedShare * x, weakLimits: blank.weak },
		limitations: [...new Set([...blank.limitations, ...corrected.limitations])]
	};
}

export interface FirstOrderEe {
	/** (L − D)/(L + D) as a fraction (× 100 for %) */
	ee: number;
	/** first-order standard uncertainty */
	u: number;
	components: Component[];
	nuEff: number;
	k: number;
	U: number;
	/** two-sided p-value of ee = 0 on the t distribution with ν_eff */
	p: number;
	/** the interval ee ± U excludes zero */
	significant: boolean;
}

/**
 * First-order ee = (L − D)/(L + D) (IUPAC Gold Book, "enantiomer excess") with
 * u_ee = 2·√(D²·u_L² + L²·u_D²)/(L + D)² (JCGM 100:2008, 5.1.2, independent L and D): each
 * component of u_L is scaled by c_L = 2D/(L + D)², of u_D by c_D = 2L/(L + D)², and ν_eff is the
 * Welch–Satterthwaite value over all of them (G.4.1); U = t₉₅(ν_eff)·u_ee. Null when L + D = 0 or an
 * uncertainty is unknown.
 */
export function firstOrderEe(l: Measurement, d: Measurement): FirstOrderEe | null {
	const L = finite(l.value, 'L');
	const D = finite(d.value, 'D');
	const lc = componentsOf(l);
	const dc = componentsOf(d);
	const sum = L + D;
	if (sum === 0 || lc === null || dc === null) return null;
	const cl = (2 * Math.abs(D)) / (sum * sum);
	const cd = (2 * Math.abs(L)) / (sum * sum);
	const components = [...lc.map((c) => ({ ...c, source: `L: ${c.source}`, u: cl * c.u })), ...dc.map((c) => ({ ...c, source: `D: ${c.source}`, u: cd * c.u }))];
	const ee = (L - D) / sum;
	const u = combined(components);
	const nuEff = welchSatterthwaite(components);
	const k = coverageFactor(nuEff);
	const U = k * u;
	return { ee, u, components, nuEff, k, U, p: twoSidedP(ee, u, nuEff), significant: Math.abs(ee) > U };
}

/** Deterministic 32-bit seed of a text (FNV-1a), so the same result always draws the same numbers. */
export function seedOf(text: string): number {
	let h = 0x811c9dc5;
	for (let i = 0; i < text.length; i++) {
		h ^= text.charCodeAt(i);
		h = Math.imul(h, 0x01000193);
	}
	return h >>> 0;
}

/**
 * GUM Supplement 1 propagation of ee (JCGM 101:2008): each input is its estimate plus, for each
 * component, u·t_ν (a scaled and shifted t for a Type A component, 6.4.9; a Gaussian for ν = ∞,
 * 6.4.7), independent; ee = (L − D)/(L + D) is evaluated M times.
 */
export function eeMonteCarlo(l: Measurement, d: Measurement, opts: { trials?: number; seed?: number } = {}): MonteCarloResult | null {
	const lc = componentsOf(l);
	const dc = componentsOf(d);
	if (lc === null || dc === null) return null;
	const draw = (x: number, cs: Component[], normal: () => number) => {
		let v = x;
		for (const c of cs) if (c.u > 0) v += c.u * tDeviate(normal, c.nu);
		return v;
	};
	return monteCarlo(
		(normal) => {
			const L = draw(l.value, lc, normal);
			const D = draw(d.value, dc, normal);
			return (L - D) / (L + D);
		},
		{ trials: opts.trials, seed: opts.seed }
	);
}

/** ee is printed in % with one decimal: its last digit is 10⁻³ as a fraction, so δ = 0.0005 (JCGM 101:2008, 7.9.2). */
export const EE_DELTA = numericalTolerance(-3);

/** An ee that is not quoted, with the reason. */
export function noEe(status: EeStatus, why: string, weakLimits: boolean): EnantiomericExcess {
	return { status, ee: null, u: null, nuEff: null, k: null, U: null, components: null, interval: null, significant: null, p: null, adjusted: null, excess: null, mc: null, instead: null, weakLimits, why, limitations: [why] };
}

export type EeStatus = 'quantified' | 'semi_quantitative' | 'not_quantifiable' | 'not_assessable' | 'achiral';

export interface EnantiomericExcess {
	status: EeStatus;
	/** the quoted ee as a fraction; null unless quantified or semi-quantitative */
	ee: number | null;
	/** first-order standard uncertainty, ν_eff, k and U (present when it could be computed) */
	u: number | null;
	nuEff: number | null;
	k: number | null;
	U: number | null;
	components: Component[] | null;
	/** the 95 % interval the verdict is decided on */
	interval: { low: number; high: number; source: 'first-order' | 'monte-carlo' } | null;
	/** the interval excludes zero; null when no ee is quoted */
	significant: boolean | null;
	/** two-sided p-value of "no excess" (first-order t, or Monte-Carlo for a semi-quantitative ee) */
	p: number | null;
	/** the verdict after the report's multiple-comparison control (set by computeReport) */
	adjusted: { method: Adjustment; p: number; significant: boolean } | null;
	/** which enantiomer is in excess, when an ee is quoted */
	excess: 'L' | 'D' | 'none' | null;
	/** the Monte-Carlo propagation, run for every ee near its limits */
	mc: (MonteCarloResult & { validation: Validation | null }) | null;
	/** when no ee is quoted: what can be said instead */
	instead: { detected: 'L' | 'D' | null; value: number | null; U: number | null; otherLimit: number | null; eeAtLeast: number | null } | null;
	/** the limits behind the decision are weak */
	weakLimits: boolean;
	/** why the ee is or is not quoted, in one sentence */
	why: string;
	limitations: string[];
}

/**
 * Enantiomeric excess of blank-corrected L and D (DESIGN.md §3.8), with the rules for quoting it:
 * - either enantiomer below its LOD (or ≤ 0): not quantifiable, no ee; the detected enantiomer
 *   alone and a bound on the excess from the other's detection limit instead;
 * - no limit (one blank) or no uncertainty: no ee;
 * - either between LOD and LOQ: semi-quantitative, quoted only with its Monte-Carlo interval;
 * - both above LOQ: first-order ee ± U, U = t₉₅(ν_eff)·u; the Monte-Carlo propagation runs too when
 *   either is within twice its LOQ, and replaces the first-order interval when it does not
 *   validate it (JCGM 101:2008, §8).
 */
export function enantiomericExcess(L: AnalyteResult, D: AnalyteResult, opts: { seed?: number; trials?: number } = {}): EnantiomericExcess {
	const weak = L.flags.weakLimits || D.flags.weakLimits;
	const base = { ee: null, u: null, nuEff: null, k: null, U: null, components: null, interval: null, significant: null, p: null, adjusted: null, excess: null, mc: null, instead: null, weakLimits: weak, limitations: [] as string[] };
	const l = L.corrected;
	const d = D.corrected;
	if (l.value === null || d.value === null) return { ...base, status: 'not_assessable', why: LIMITATIONS.noBlank, limitations: [LIMITATIONS.noBlank] };
	if (L.level === 'below_lod' || D.level === 'below_lod') {
		const lDet = L.level !== 'below_lod';
		const dDet = D.level !== 'below_lod';
		const det = lDet ? L : dDet ? D : null;
		const other = lDet ? D : L;
		const key: 'L' | 'D' | null = lDet ? 'L' : dDet ? 'D' : null;
		let eeAtLeast: number | null = null;
		if (det && det.corrected.U !== null && other.blank.lodNet !== null) {
			const low = det.corrected.value! - det.corrected.U;
			const lim = other.blank.lodNet;
			if (low > 0) eeAtLeast = (low - lim) / (low + lim);
		}
		const word = (r: AnalyteResult) => (r.corrected.value! <= 0 ? 'not above its blank' : 'below its detection limit');
		const why = det
			? `Not quantifiable: ${key === 'L' ? 'D' : 'L'} is ${word(other)}, so no ee is quoted; only ${key} is detected${eeAtLeast !== null && eeAtLeast > 0 ? `, and with the other enantiomer at most at its detection limit the ${key}-excess is at least ${(eeAtLeast * 100).toFixed(1)} %` : ''}.`
			: 'Not quantifiable: neither enantiomer is above its detection limit, so no ee is quoted and nothing can be said about an excess.';
		return {
			...base,
			status: 'not_quantifiable',
			instead: { detected: key, value: det ? det.corrected.value : null, U: det ? det.corrected.U : null, otherLimit: det ? other.blank.lodNet : null, eeAtLeast: eeAtLeast !== null && eeAtLeast > 0 ? eeAtLeast : null },
			why
		};
	}
	if (L.level === 'unknown' || D.level === 'unknown') return { ...base, status: 'not_assessable', why: LIMITATIONS.eeNoLimit, limitations: [LIMITATIONS.eeNoLimit] };
	const first = firstOrderEe({ value: l.value, u: l.u, components: l.components ?? undefined }, { value: d.value, u: d.u, components: d.components ?? undefined });
	if (l.u === null || d.u === null || first === null) {
		const sum = l.value + d.value;
		const why = sum === 0 ? LIMITATIONS.eeSumZero : LIMITATIONS.eeNoU;
		return { ...base, status: 'not_assessable', why, limitations: [why] };
	}
	const fo = { ee: first.ee, u: first.u, nuEff: first.nuEff, k: first.k, U: first.U, components: first.components };
	const excess = first.ee > 0 ? 'L' : first.ee < 0 ? 'D' : 'none';
	const semi = L.level === 'below_loq' || D.level === 'below_loq';
	const near = semi || l.value < 2 * L.blank.loqNet! || d.value < 2 * D.blank.loqNet!;
	let mc: EnantiomericExcess['mc'] = null;
	// trials: 0 leaves the propagation out (a count of flags does not depend on it)
	if (near && opts.trials !== 0) {
		const run = eeMonteCarlo({ value: l.value, components: l.components! }, { value: d.value, components: d.components! }, opts);
		if (run) mc = { ...run, validation: validateFirstOrder(first.ee, first.U, run, EE_DELTA) };
	}
	const weakNote = weak ? ' The limits behind this decision are weak.' : '';
	if (semi) {
		const m = mc;
		return {
			...base,
			...fo,
			status: 'semi_quantitative',
			excess,
			mc,
			interval: m ? { low: m.low, high: m.high, source: 'monte-carlo' } : null,
			significant: m ? m.low > 0 || m.high < 0 : null,
			p: m ? Math.min(1, 2 * Math.min(m.belowZero, m.aboveZero)) : null,
			why: `Semi-quantitative: ${L.level === 'below_loq' ? 'L' : 'D'} lies between its detection and quantification limits, so ee is quoted only with its Monte-Carlo interval (JCGM 101:2008).${weakNote}`
		};
	}
	const useMc = mc !== null && mc.validation !== null && !mc.validation.validated;
	const interval = useMc ? { low: mc!.low, high: mc!.high, source: 'monte-carlo' as const } : { low: first.ee - first.U, high: first.ee + first.U, source: 'first-order' as const };
	const significant = interval.low > 0 || interval.high < 0;
	return {
		...base,
		...fo,
		status: 'quantified',
		excess,
		mc,
		interval,
		significant,
		p: useMc ? Math.min(1, 2 * Math.min(mc!.belowZero, mc!.aboveZero)) : first.p,
		why: `Quoted: both enantiomers are above their quantification limits${mc ? (useMc ? '; the first-order interval did not pass the Monte-Carlo check (JCGM 101:2008, §8), so the Monte-Carlo interval is used' : '; the first-order interval passed the Monte-Carlo check (JCGM 101:2008, §8)') : ''}.${weakNote}`
	};
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
		/** an L-excess (quoted, or L detected alone) in a protein amino acid with blankShare ≥ highBlankShare; null when it cannot be judged */
		possibleTerrestrialContamination: boolean | null;
	};
	limitations: string[];
}

/**
 * One chiral analyte of one sample (DESIGN.md §3.7–3.8): each enantiomer against its blanks, ee
 * of the blank-corrected abundances under the quoting rules of enantiomericExcess, and the
 * possible-terrestrial-contamination flag for an L-excess in a protein amino acid with a high blank
 * share (terrestrial biology is L-dominated; common practice, the threshold is a setting with no
 * single published source).
 */
export function assessEnantiomers(
	analyte: string,
	l: { signal: Measurement; blanks: readonly number[] | BlankStatistics },
	d: { signal: Measurement; blanks: readonly number[] | BlankStatistics },
	settings: BlankSettings = DEFAULT_BLANK_SETTINGS,
	opts: { seed?: number; trials?: number } = {}
): EnantiomerResult {
	const acid = aminoAcid(analyte);
	const L = assessAnalyte(l.signal, l.blanks, settings);
	const D = assessAnalyte(d.signal, d.blanks, settings);
	const limitations = [...new Set([...L.limitations, ...D.limitations])];
	let ee: EnantiomericExcess;
	if (acid && !acid.chiral) {
		ee = noEe('achiral', LIMITATIONS.achiral, false);
	} else ee = enantiomericExcess(L, D, { seed: opts.seed ?? seedOf(analyte), trials: opts.trials });
	for (const x of ee.limitations) if (!limitations.includes(x)) limitations.push(x);

	const bothCorrected = L.corrected.value !== null && D.corrected.value !== null;
	const signalSum = l.signal.value + d.signal.value;
	const blankShare = bothCorrected && signalSum > 0 ? (L.blank.mean! + D.blank.mean!) / signalSum : null;
	const lExcess = ee.ee !== null ? ee.ee > 0 : ee.status === 'not_quantifiable' && ee.instead?.detected === 'L' ? true : null;
	let possible: boolean | null;
	if (!acid) {
		possible = null;
		limitations.push(LIMITATIONS.unknownAminoAcid);
	} else if (acid.kind === 'non-protein' || !acid.chiral) possible = false;
	else if (lExcess === null || blankShare === null) possible = null;
	else possible = lExcess && blankShare >= settings.highBlankShare;
	return { analyte, aminoAcid: acid, L, D, ee, blankShare, flags: { possibleTerrestrialContamination: possible }, limitations };
}
