/**
 * Item codes: PREFIX-NNNNN/C — collection prefix (2–5 letters), serial zero-padded to at least
 * 5 digits, and after a slash one check character over prefix and padded serial, computed with
 * ISO/IEC 7064:2003, MOD 37,36 (hybrid system, alphanumeric, check character 0-9A-Z).
 * The slash sets the check character apart from the serial, so it does not read as a sub-number
 * ("/C" is "check C"); labels say so beside the code.
 *
 * The system detects all single substitution errors and nearly all adjacent transpositions:
 * a hybrid system cannot catch the swap of two characters of consecutive value (e.g. "45" ↔ "54")
 * at one running state in 36.
 *
 * Codes printed before the slash came in had a hyphen in its place (PREFIX-NNNNN-C): that form
 * is still read everywhere a code is typed, scanned, imported or found in a link, and means the
 * same item. In a URL path the slash is percent-encoded (`itemPath`), and a link that leaves it
 * unencoded still reaches the item (src/hooks.ts).
 */

const ALPHABET = '0123456789ABCDEFGHIJKLMNOPQRSTUVWXYZ';
const M = 36;

/** What stands between the serial and the check character. */
export const CHECK_SEPARATOR = '/';
/** The separator of codes printed before the slash; still accepted on input. */
export const LEGACY_CHECK_SEPARATOR = '-';

/** Short words for a label or a form: how to read the part after the slash. */
export const CHECK_EXPLANATION = '/ check character';

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

/** Builds an item code PREFIX-NNNNN/C with its ISO/IEC 7064:2003 MOD 37,36 check character. */
export function formatCode(prefix: string, serial: number): string {
	if (!/^[A-Z]{2,5}$/.test(prefix)) throw new RangeError(`collection prefix must be 2 to 5 capital letters, got "${prefix}"`);
	if (!Number.isSafeInteger(serial) || serial < 1) throw new RangeError(`serial must be a whole number ≥ 1, got ${serial}`);
	const digits = String(serial).padStart(5, '0');
	return `${prefix}-${digits}${CHECK_SEPARATOR}${checkChar(prefix + digits)}`;
}

/** The same code in the form printed before the slash (PREFIX-NNNNN-C). */
export function legacyCode(code: string): string {
	const i = code.lastIndexOf(CHECK_SEPARATOR);
	return i < 0 ? code : code.slice(0, i) + LEGACY_CHECK_SEPARATOR + code.slice(i + 1);
}

/** A code as one URL path segment: the slash percent-encoded (TRN-00042%2FG). */
export function itemPath(code: string): string {
	return encodeURIComponent(code);
}

/** The item page of a code, e.g. /items/TRN-00042%2FG. */
export function itemHref(code: string): string {
	return `/items/${itemPath(code)}`;
}

/** A code inside a file name, where a slash cannot stand: TRN-00042_G. */
export function codeForFileName(code: string): string {
	return code.replaceAll(CHECK_SEPARATOR, '_');
}


export type ParsedCode =
	| { ok: true; prefix: string; serial: number; code: string }
	| { ok: false; kind: 'malformed' | 'check'; reason: string };

/**
 * Reads an item code typed or scanned by a person: trims, uppercases, accepts typographic
 * dashes and slashes, a percent-encoded slash (from a link) and the older hyphen before the
 * check character, and verifies the check character (ISO/IEC 7064:2003, MOD 37,36). The code
 * returned is always written PREFIX-NNNNN/C.
 */
export function parseCode(text: string): ParsedCode {
	const malformed = (reason: string): ParsedCode => ({ ok: false, kind: 'malformed', reason });
	const shown = String(text ?? '').trim();
	const t = shown
		.toUpperCase()
		.replace(/[\u2010-\u2015\u2212]/g, '-')
		.replace(/[\u2044\u2215\uff0f]/g, '/')
		.replace(/%2F/g, '/');
	const example = formatCode('TRN', 42);
	if (t === '') return malformed(`enter an item code, e.g. ${example}`);
	const m = /^([A-Z]+)-(\d+)([/-])([0-9A-Z])$/.exec(t);
	if (!m) return malformed(`"${shown}" is not an item code: expected PREFIX-NNNNN/C (C is the check character), e.g. ${example}`);
	const [, prefix, digits, , given] = m;
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
	return { ok: true, prefix, serial, code: `${prefix}-${digits}${CHECK_SEPARATOR}${given}` };
}
