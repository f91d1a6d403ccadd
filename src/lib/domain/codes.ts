/**
 * Item codes: PREFIX-NNNNN-C — collection prefix (2–5 letters), serial zero-padded to at least
 * 5 digits, and one check character over prefix and padded serial, computed with
 * ISO/IEC 7064:2003, MOD 37,36 (hybrid system, alphanumeric, check character 0-9A-Z).
 * The system detects all single substitution errors and nearly all adjacent transpositions:
 * a hybrid system cannot catch the swap of two characters of consecutive value (e.g. "45" ↔ "54")
 * at one running state in 36.
 */

const ALPHABET = '0123456789ABCDEFGHIJKLMNOPQRSTUVWXYZ';
const M = 36;

/** Check character for an alphanumeric string (ISO/IEC 7064:2003, MOD 37,36 hybrid system). */
export function checkChar(body: string): string {
	if (!/^[0-9A-Z]+$/.test(body)) throw new RangeError(`check body must be digits and capital letters, got "${body}"`);
	let p = M;
	for (const ch of body) {
		const s = (p + ALPHABET.indexOf(ch)) % M || M;
		p = (2 * s) % (M + 1);
	}
	return ALPHABET[(M + 1 - p) % M];
}

/** Builds an item code PREFIX-NNNNN-C with its ISO/IEC 7064:2003 MOD 37,36 check character. */
export function formatCode(prefix: string, serial: number): string {
	if (!/^[A-Z]{2,5}$/.test(prefix)) throw new RangeError(`collection prefix must be 2 to 5 capital letters, got "${prefix}"`);
	if (!Number.isSafeInteger(serial) || serial < 1) throw new RangeError(`serial must be a whole number ≥ 1, got ${serial}`);
	const digits = String(serial).padStart(5, '0');
	return `${prefix}-${digits}-${checkChar(prefix + digits)}`;
}

export type ParsedCode =
	| { ok: true; prefix: string; serial: number; code: string }
	| { ok: false; kind: 'malformed' | 'check'; reason: string };

/**
 * Reads an item code typed or scanned by a person: trims, uppercases, accepts typographic
 * dashes, and verifies the check character (ISO/IEC 7064:2003, MOD 37,36).
 */
export function parseCode(text: string): ParsedCode {
	const malformed = (reason: string): ParsedCode => ({ ok: false, kind: 'malformed', reason });
	const shown = String(text ?? '').trim();
	const t = shown.toUpperCase().replace(/[\u2010-\u2015\u2212]/g, '-');
	const example = formatCode('TRN', 42);
	if (t === '') return malformed(`enter an item code, e.g. ${example}`);
	const m = /^([A-Z]+)-(\d+)-([0-9A-Z])$/.exec(t);
	if (!m) return malformed(`"${shown}" is not an item code: expected PREFIX-NNNNN-C, e.g. ${example}`);
	const [, prefix, digits, given] = m;
	if (prefix.length < 2 || prefix.length > 5) return malformed(`"${shown}": the collection prefix must be 2 to 5 letters`);
	if (digits.length < 5) return malformed(`"${shown}": the serial must have at least 5 digits, zero-padded`);
	if (digits.length > 5 && digits.startsWith('0')) return malformed(`"${shown}": the serial has extra leading zeros`);
	const serial = Number(digits);
	if (!Number.isSafeInteger(serial)) return malformed(`"${shown}": the serial is too long`);
	if (serial < 1) return malformed(`"${shown}": the serial must be 1 or more`);
	const expected = checkChar(prefix + digits);
	if (given !== expected) {
		return {
			ok: false,
			kind: 'check',
			reason: `check character is ${given}, expected ${expected}: the code was mistyped or misread; compare every character with the label`
		};
	}
	return { ok: true, prefix, serial, code: t };
}
