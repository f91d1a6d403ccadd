/**
 * Masses: exact integers in micrograms (µg). Uncertainties: standard uncertainties in µg.
 * Pure functions, safe to run in the browser and on the server.
 */

/** Error for a mass value or mass text that cannot be accepted; `field` names the input. */
export class MassInputError extends Error {
	readonly field: string;
	constructor(field: string, message: string) {
		super(message);
		this.name = 'MassInputError';
		this.field = field;
	}
}

export interface BalanceSpec {
	/** readability (scale interval) d, µg */
	d: number;
	/** repeatability s (standard deviation of repeated weighings), µg */
	s: number;
}

function nonNegative(x: number, what: string): number {
	if (!Number.isFinite(x) || x < 0) throw new RangeError(`${what} must be a finite number ≥ 0, got ${x}`);
	return x;
}

/**
 * Standard uncertainty of a digital indication with resolution d: u = d/√12
 * (JCGM 100:2008 (GUM), F.2.2.1: rectangular distribution of half-width d/2).
 */
export function readingUncertainty(d: number): number {
	return nonNegative(d, 'readability d') / Math.sqrt(12);
}

/**
 * Standard uncertainty of a net mass from a gross and a tare reading:
 * u_net = √(2·(s² + d²/12)); each reading carries repeatability s (Type A) and
 * resolution d/√12 (Type B), combined as independent inputs (JCGM 100:2008, 5.1.2, F.2.2.1).
 */
export function netUncertainty({ d, s }: BalanceSpec): number {
	const ur = readingUncertainty(d);
	nonNegative(s, 'repeatability s');
	return Math.sqrt(2 * (s * s + ur * ur));
}

/** Expanded uncertainty U = k·u, coverage factor k = 2 by default (JCGM 100:2008, 6.2–6.3). */
export function expanded(u: number, k = 2): number {
	return nonNegative(k, 'coverage factor k') * nonNegative(u, 'standard uncertainty u');
}

/** A non-negative finite number read as the shortest decimal that prints it: x = m·10^e. */
function decimal(x: number): { m: bigint; e: number } {
	const t = /^(\d+)(?:\.(\d+))?(?:e([+-]\d+))?$/.exec(String(nonNegative(x, 'value')));
	if (!t) throw new RangeError(`cannot read ${x} as a decimal`);
	const frac = t[2] ?? '';
	return { m: BigInt(t[1] + frac), e: Number(t[3] ?? 0) - frac.length };
}

/**
 * value × factor rounded up or down to a whole µg, in exact decimal arithmetic: both numbers
 * are read as the decimals they print as (what was typed), so 0.07 × 100 gives 7, not 8.
 * Plain decimal arithmetic; no external source.
 */
export function scaleUg(value: number, factor: number, rounding: 'ceil' | 'floor'): number {
	const a = decimal(value);
	const b = decimal(factor);
	const m = a.m * b.m;
	const e = a.e + b.e;
	let r: bigint;
	if (e >= 0) r = m * 10n ** BigInt(e);
	else {
		const q = 10n ** BigInt(-e);
		r = rounding === 'ceil' ? (m + q - 1n) / q : m / q;
	}
	if (r > BigInt(Number.MAX_SAFE_INTEGER)) throw new RangeError(`${value} × ${factor} is too large`);
	return Number(r);
}

/**
 * USP General Chapter <41> Balances: repeatability is adequate when 2·s/m ≤ 0.10 %, with s
 * replaced by 0.41·d when smaller, so m_min = 2000·max(s, 0.41·d); rounded up to whole µg.
 */
export function minimumWeight({ d, s }: BalanceSpec): number {
	return Math.max(scaleUg(s, 2000, 'ceil'), scaleUg(d, 820, 'ceil'));
}

/**
 * Integer µg as mg text with a fixed number of decimals, e.g. 2184000 → "2184.000 mg".
 * Exact integer arithmetic; with fewer than 3 decimals, halves round away from zero.
 * Presentation rule of this product (SI: 1 mg = 1000 µg).
 */
export function formatMg(ug: number, decimals = 3): string {
	if (!Number.isSafeInteger(ug)) throw new RangeError(`mass must be a whole number of µg, got ${ug}`);
	if (!Number.isInteger(decimals) || decimals < 0 || decimals > 9) {
		throw new RangeError(`decimals must be an integer from 0 to 9, got ${decimals}`);
	}
	let n = BigInt(Math.abs(ug));
	if (decimals < 3) {
		const q = 10n ** BigInt(3 - decimals);
		n = (n + q / 2n) / q;
	} else n *= 10n ** BigInt(decimals - 3);
	const digits = n.toString().padStart(decimals + 1, '0');
	const cut = digits.length - decimals;
	const sign = ug < 0 && n > 0n ? '-' : '';
	return `${sign}${digits.slice(0, cut)}${decimals ? '.' + digits.slice(cut) : ''} mg`;
}

/**
 * Number of mg decimals that shows a balance's readability d (µg) exactly:
 * 0.1 µg → 4, 1 µg → 3, 10 µg → 2. Follows the indication of the balance (JCGM 100:2008, F.2.2.1).
 */
export function decimalsForReadability(dUg: number): number {
	if (!(dUg > 0) || !Number.isFinite(dUg)) throw new RangeError(`readability must be > 0 µg, got ${dUg}`);
	let { m, e } = decimal(dUg);
	while (m % 10n === 0n) {
		m /= 10n;
		e += 1;
	}
	return Math.max(0, 3 - e);
}

/**
 * Reads mg text ("12.345", "12.345 mg") as exact integer µg. Refuses signs, exponents,
 * decimal commas, NaN/Infinity, and any non-zero digit finer than 1 µg (0.001 mg).
 * Plain decimal arithmetic (SI: 1 mg = 1000 µg).
 */
export function parseMgToUg(text: string, field = 'mass'): number {
	const fail = (why: string): never => {
		throw new MassInputError(field, why);
	};
	if (typeof text !== 'string') return fail(`${field} is missing`);
	const t = text.trim().replace(/\s*mg$/i, '');
	if (t === '') return fail(`${field} is empty: enter a mass in mg, e.g. 12.345`);
	if (/^[-\u2212]/.test(t)) return fail(`${field} must not be negative: "${text.trim()}"`);
	if (/,/.test(t)) return fail(`${field} "${text.trim()}": use a point as the decimal separator and no thousands separators`);
	const match = /^(\d+)(?:\.(\d+))?$/.exec(t);
	if (!match) {
		return fail(`${field} "${text.trim()}" is not a mass in mg: use digits with an optional decimal point, e.g. 0.5 or 12.345 (no signs, exponents or letters)`);
	}
	const frac = match[2] ?? '';
	if (/[1-9]/.test(frac.slice(3))) {
		return fail(`${field} "${text.trim()}" has more decimals than a microgram (0.001 mg); masses are recorded in whole µg`);
	}
	const ug = BigInt(match[1]) * 1000n + BigInt(frac.slice(0, 3).padEnd(3, '0'));
	if (ug > BigInt(Number.MAX_SAFE_INTEGER)) return fail(`${field} "${text.trim()}" is too large`);
	return Number(ug);
}

/**
 * Asserts a stored mass: a safe integer number of µg, positive (or zero when allowZero).
 * Masses are exact integers, never floating point (product rule, DESIGN §3).
 */
export function assertMicrograms(
	value: unknown,
	field: string,
	options: { allowZero?: boolean } = {}
): asserts value is number {
	if (typeof value !== 'number' || !Number.isInteger(value)) {
		throw new MassInputError(field, `${field} must be a whole number of micrograms, got ${String(value)}`);
	}
	if (!Number.isSafeInteger(value)) throw new MassInputError(field, `${field} is too large: ${value} µg`);
	if (value < 0 || (value === 0 && !options.allowZero)) {
		throw new MassInputError(field, `${field} must be ${options.allowZero ? 'zero or more' : 'more than zero'}, got ${value} µg`);
	}
}

/** A balance's capacity (µg) in grams for people, e.g. 2 100 000 µg → "2.1 g": a maximum load, not a measured mass. */
export function formatCapacity(ug: number): string {
	return `${(ug / 1e6).toLocaleString('en-GB', { maximumFractionDigits: 6 })} g`;
}
