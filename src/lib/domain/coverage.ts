/**
 * Degrees of freedom, coverage factors, multiple-comparison control and the Monte-Carlo
 * propagation behind the blank-control report (DESIGN.md §3.7–3.8). Pure TypeScript; Student's t
 * quantiles come from jstat, not from a table of our own.
 */
import jstat from 'jstat';

const { jStat } = jstat;

/** One contribution to a combined standard uncertainty: c·u(x) in the output's unit, with its degrees of freedom. */
export interface Component {
	/** what the contribution is, in words */
	source: string;
	/** |cᵢ|·u(xᵢ), the contribution to the combined standard uncertainty */
	u: number;
	/** degrees of freedom of u(xᵢ); Infinity for a stated (Type B) uncertainty taken as exactly known */
	nu: number;
}

/** Coverage probability of every interval in the report. */
export const COVERAGE = 0.95;

/**
 * Combined standard uncertainty u_c = √(Σ uᵢ²) of independent contributions (JCGM 100:2008, 5.1.2).
 */
export function combined(components: readonly Component[]): number {
	return Math.sqrt(components.reduce((a, c) => a + c.u * c.u, 0));
}

/**
 * Welch–Satterthwaite effective degrees of freedom ν_eff = u_c⁴ / Σ(uᵢ⁴/νᵢ) (JCGM 100:2008,
 * G.4.1, eq. (G.2b)). Contributions with νᵢ = ∞ or uᵢ = 0 add nothing to the denominator; when
 * nothing is left, ν_eff = ∞.
 */
export function welchSatterthwaite(components: readonly Component[]): number {
	const uc = combined(components);
	let den = 0;
	for (const c of components) {
		if (!(c.nu > 0)) throw new RangeError(`degrees of freedom must be positive, got ${c.nu} for ${c.source}`);
		if (c.u > 0 && Number.isFinite(c.nu)) den += c.u ** 4 / c.nu;
	}
	if (den === 0) return Infinity;
	return uc ** 4 / den;
}

/**
 * Student's t quantile t_p(ν) from jstat; ν = ∞ gives the normal quantile. Non-integer ν is
 * truncated to the next lower integer, as JCGM 100:2008 G.4.1 (note) allows, which errs on the
 * safe side (a larger t).
 */
export function tQuantile(p: number, nu: number): number {
	if (!(p > 0 && p < 1)) throw new RangeError(`p must lie in (0, 1), got ${p}`);
	if (!(nu >= 1)) throw new RangeError(`degrees of freedom must be at least 1, got ${nu}`);
	if (!Number.isFinite(nu) || nu > 1e7) return jStat.normal.inv(p, 0, 1);
	return jStat.studentt.inv(p, Math.floor(nu));
}

/** Coverage factor k = t₉₅(ν_eff) for a two-sided 95 % interval (JCGM 100:2008, G.3.2, G.4.1, Table G.2). */
export function coverageFactor(nuEff: number, coverage = COVERAGE): number {
	return tQuantile((1 + coverage) / 2, nuEff);
}

/** Two-sided p-value of an estimate y with standard uncertainty u and ν degrees of freedom (t-distributed (y − 0)/u). */
export function twoSidedP(y: number, u: number, nu: number): number {
	if (!(u > 0)) return y === 0 ? 1 : 0;
	const z = Math.abs(y) / u;
	const tail = !Number.isFinite(nu) || nu > 1e7 ? 1 - jStat.normal.cdf(z, 0, 1) : 1 - jStat.studentt.cdf(z, Math.floor(nu));
	return Math.min(1, 2 * tail);
}

export type Adjustment = 'holm' | 'bh' | 'none';

export const ADJUSTMENT_LABELS: Record<Adjustment, string> = {
	holm: 'Holm (family-wise error rate)',
	bh: 'Benjamini–Hochberg (false-discovery rate)',
	none: 'none'
};

/**
 * Adjusted p-values for m simultaneous tests. Holm: step-down, p̃₍ᵢ₎ = max_{j≤i} min(1, (m − j + 1)·p₍ⱼ₎)
 * (S. Holm, Scand. J. Statist. 6 (1979) 65), controls the family-wise error rate. Benjamini–Hochberg:
 * step-up, p̃₍ᵢ₎ = min_{j≥i} min(1, m·p₍ⱼ₎/j) (Y. Benjamini and Y. Hochberg, J. R. Statist. Soc. B 57
 * (1995) 289), controls the false-discovery rate. A test is significant after adjustment when p̃ ≤ α.
 * Sources cited from memory of the papers' procedures.
 */
export function adjustPValues(p: readonly number[], method: Adjustment): number[] {
	const m = p.length;
	if (method === 'none' || m === 0) return [...p];
	for (const x of p) if (!(x >= 0 && x <= 1)) throw new RangeError(`p-values must lie in [0, 1], got ${x}`);
	const order = p.map((x, i) => [x, i] as const).sort((a, b) => a[0] - b[0] || a[1] - b[1]);
	const out = new Array<number>(m);
	if (method === 'holm') {
		let running = 0;
		order.forEach(([x, i], j) => {
			running = Math.max(running, Math.min(1, (m - j) * x));
			out[i] = running;
		});
	} else {
		let running = 1;
		for (let j = m - 1; j >= 0; j--) {
			const [x, i] = order[j];
			running = Math.min(running, Math.min(1, (m * x) / (j + 1)));
			out[i] = running;
		}
	}
	return out;
}

/**
 * Seeded uniform generator on [0, 1): mulberry32, a public-domain 32-bit generator. Monte-Carlo
 * results are reproducible: the same report always gives the same interval. (JCGM 101:2008 C.3
 * recommends an enhanced Wichmann–Hill generator; mulberry32's period of 2³² is ample for the
 * 10⁶ trials of one propagation, and that choice is ours.)
 */
export function uniformSource(seed: number): () => number {
	let a = seed >>> 0;
	return () => {
		a = (a + 0x6d2b79f5) >>> 0;
		let t = a;
		t = Math.imul(t ^ (t >>> 15), t | 1);
		t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
		return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
	};
}

/** Standard normal deviates by the Box–Muller transform (JCGM 101:2008, C.4), from a seeded uniform source. */
export function normalSource(seed: number): () => number {
	const uniform = uniformSource(seed);
	let spare: number | null = null;
	return () => {
		if (spare !== null) {
			const s = spare;
			spare = null;
			return s;
		}
		const r = Math.sqrt(-2 * Math.log(1 - uniform()));
		const th = 2 * Math.PI * uniform();
		spare = r * Math.sin(th);
		return r * Math.cos(th);
	};
}

/**
 * Student's t deviate with ν degrees of freedom from normal deviates: Z / √(χ²_ν/ν), χ²_ν a sum of
 * ν squared normals for small ν (JCGM 101:2008, 6.4.9.5 and C.6). ν = ∞ gives Z.
 */
export function tDeviate(normal: () => number, nu: number): number {
	const z = normal();
	if (!Number.isFinite(nu)) return z;
	const n = Math.floor(nu);
	let chi = 0;
	if (n <= 30) for (let i = 0; i < n; i++) {
		const g = normal();
		chi += g * g;
	}
	else {
		// Wilson–Hilferty: χ²_ν ≈ ν·(1 − 2/(9ν) + Z·√(2/(9ν)))³, ample for ν > 30
		const w = 1 - 2 / (9 * n) + normal() * Math.sqrt(2 / (9 * n));
		chi = n * w * w * w;
	}
	return z / Math.sqrt(chi / n);
}

export interface MonteCarloResult {
	/** number of trials M */
	trials: number;
	seed: number;
	mean: number;
	sd: number;
	/** probabilistically symmetric 95 % coverage interval (JCGM 101:2008, 7.7) */
	low: number;
	high: number;
	/** share of trials ≤ 0 and ≥ 0, for a two-sided p-value of "no effect" */
	belowZero: number;
	aboveZero: number;
}

/** Default number of trials: JCGM 101:2008, 7.2.2, expects M = 10⁶ to give a 95 % interval to one or two significant digits. */
export const MC_TRIALS = 1_000_000;

/**
 * GUM Supplement 1 propagation (JCGM 101:2008, 7.2–7.7): draws the inputs M times, evaluates the
 * model, sorts the outputs and takes the probabilistically symmetric coverage interval between the
 * ((1 − p)/2)·M-th and ((1 + p)/2)·M-th values. `model` receives a normal and a uniform source
 * (both seeded) and returns one output.
 */
export function monteCarlo(model: (normal: () => number, uniform: () => number) => number, opts: { trials?: number; seed?: number; coverage?: number } = {}): MonteCarloResult {
	const M = opts.trials ?? MC_TRIALS;
	const seed = opts.seed ?? 1;
	const p = opts.coverage ?? COVERAGE;
	const normal = normalSource(seed);
	const uniform = uniformSource((seed ^ 0x9e3779b9) >>> 0);
	const y = new Float64Array(M);
	let sum = 0;
	let below = 0;
	let above = 0;
	for (let r = 0; r < M; r++) {
		const v = model(normal, uniform);
		y[r] = v;
		sum += v;
		if (v <= 0) below++;
		if (v >= 0) above++;
	}
	const mean = sum / M;
	let ss = 0;
	for (let r = 0; r < M; r++) ss += (y[r] - mean) ** 2;
	y.sort();
	// JCGM 101:2008, 7.7.2: with q = pM an integer, the interval is [y_(r), y_(r+q)], r = (M − q)/2
	const q = Math.round(p * M);
	const r = Math.max(1, Math.round((M - q) / 2));
	return { trials: M, seed, mean, sd: Math.sqrt(ss / (M - 1)), low: y[r - 1], high: y[Math.min(M, r + q) - 1], belowZero: below / M, aboveZero: above / M };
}

/**
 * Numerical tolerance δ of a value printed with a last digit of 10^exponent: δ = ½·10^exponent
 * (JCGM 101:2008, 7.9.2 and 8.2).
 */
export function numericalTolerance(lastDigitExponent: number): number {
	return 0.5 * 10 ** lastDigitExponent;
}

export interface Validation {
	delta: number;
	/** |y − U − y_low| and |y + U − y_high| (JCGM 101:2008, 8.2, eq. (13)) */
	dLow: number;
	dHigh: number;
	validated: boolean;
}

/**
 * JCGM 101:2008 §8 validation of the GUM uncertainty framework: the first-order interval
 * [y − U, y + U] is validated by the Monte-Carlo interval [y_low, y_high] when both
 * d_low = |y − U − y_low| and d_high = |y + U − y_high| are at most δ.
 */
export function validateFirstOrder(y: number, U: number, mc: Pick<MonteCarloResult, 'low' | 'high'>, delta: number): Validation {
	const dLow = Math.abs(y - U - mc.low);
	const dHigh = Math.abs(y + U - mc.high);
	return { delta, dLow, dHigh, validated: dLow <= delta && dHigh <= delta };
}
