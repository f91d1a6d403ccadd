import { describe, it, expect } from 'vitest';
import { readScan } from '../../src/lib/domain/scan';
import { formatCode, itemPath, legacyCode } from '../../src/lib/domain/codes';

const ORIGIN = 'https://regolog.brightwater.example';
const good = formatCode('TRN', 42); // TRN-00042/G (ISO/IEC 7064 MOD 37,36)
const old = legacyCode(good); // TRN-00042-G, as labels printed before the slash carry it
const wrongCheck = good.slice(0, -1) + (good.endsWith('H') ? 'J' : 'H');

describe('scan input', () => {
	it('takes a typed or wedge-scanned code, in any case, with the scanner\'s trailing Enter', () => {
		expect(good).toBe('TRN-00042/G');
		expect(readScan(good, ORIGIN)).toEqual({ ok: true, code: good });
		expect(readScan(' trn-00042/g\r\n', ORIGIN)).toEqual({ ok: true, code: good });
		expect(readScan('TRN–00042/G', ORIGIN)).toEqual({ ok: true, code: good });
		// the older form: a hyphen before the check character
		expect(old).toBe('TRN-00042-G');
		expect(readScan(old, ORIGIN)).toEqual({ ok: true, code: good });
		expect(readScan(' trn-00042-g\r\n', ORIGIN)).toEqual({ ok: true, code: good });
		expect(readScan('TRN–00042–G', ORIGIN)).toEqual({ ok: true, code: good });
	});

	it('takes the URL of a label from this origin', () => {
		// as Regolog prints it: the slash percent-encoded
		expect(itemPath(good)).toBe('TRN-00042%2FG');
		expect(readScan(`${ORIGIN}/items/${itemPath(good)}`, ORIGIN)).toEqual({ ok: true, code: good });
		expect(readScan(`${ORIGIN}/items/${itemPath(good)}/`, ORIGIN)).toEqual({ ok: true, code: good });
		expect(readScan(`HTTPS://REGOLOG.BRIGHTWATER.EXAMPLE/items/${itemPath(good)}`, ORIGIN)).toEqual({ ok: true, code: good });
		expect(readScan(`${ORIGIN}/items/${itemPath(good)}?from=label`, ORIGIN)).toEqual({ ok: true, code: good });
		// the slash left unencoded, and labels printed with the older form
		expect(readScan(`${ORIGIN}/items/${good}`, ORIGIN)).toEqual({ ok: true, code: good });
		expect(readScan(`${ORIGIN}/items/${old}`, ORIGIN)).toEqual({ ok: true, code: good });
		expect(readScan(`${ORIGIN}/items/${old}?from=label`, ORIGIN)).toEqual({ ok: true, code: good });
	});

	it('refuses a wrong check character (ISO/IEC 7064:2003 MOD 37,36), as a code and inside a URL', () => {
		const a = readScan(wrongCheck, ORIGIN);
		expect(a.ok).toBe(false);
		expect(a).toMatchObject({ kind: 'check' });
		expect(!a.ok && a.reason).toMatch(/^Check character is [0-9A-Z], expected G/);
		expect(readScan(`${ORIGIN}/items/${itemPath(wrongCheck)}`, ORIGIN)).toMatchObject({ ok: false, kind: 'check' });
		expect(readScan(`${ORIGIN}/items/${wrongCheck}`, ORIGIN)).toMatchObject({ ok: false, kind: 'check' });
		expect(readScan(legacyCode(wrongCheck), ORIGIN)).toMatchObject({ ok: false, kind: 'check' });
		expect(readScan(`${ORIGIN}/items/${legacyCode(wrongCheck)}`, ORIGIN)).toMatchObject({ ok: false, kind: 'check' });
	});

	it('refuses a URL from another origin, naming it', () => {
		const r = readScan(`https://elsewhere.example/items/${good}`, ORIGIN);
		expect(r).toMatchObject({ ok: false, kind: 'foreign' });
		expect(!r.ok && r.reason).toContain('elsewhere.example');
		expect(readScan(`http://regolog.brightwater.example/items/${good}`, ORIGIN)).toMatchObject({ ok: false, kind: 'foreign' });
		expect(readScan(`https://regolog.brightwater.example:8443/items/${good}`, ORIGIN)).toMatchObject({ ok: false, kind: 'foreign' });
	});

	it('refuses links to other Regolog pages, malformed text and nothing at all', () => {
		expect(readScan(`${ORIGIN}/collections/TRN`, ORIGIN)).toMatchObject({ ok: false, kind: 'not-item' });
		expect(readScan(`${ORIGIN}/items/${good}/split`, ORIGIN)).toMatchObject({ ok: false, kind: 'not-item' });
		expect(readScan(`${ORIGIN}/items/${itemPath(good)}/split`, ORIGIN)).toMatchObject({ ok: false, kind: 'not-item' });
		expect(readScan(`${good}/split`, ORIGIN)).toMatchObject({ ok: false, kind: 'malformed' });
		expect(readScan('TRN-42', ORIGIN)).toMatchObject({ ok: false, kind: 'malformed' });
		expect(readScan('hello world', ORIGIN)).toMatchObject({ ok: false, kind: 'malformed' });
		expect(readScan(`regolog.brightwater.example/items/${itemPath(good)}`, ORIGIN)).toMatchObject({ ok: false, kind: 'malformed' });
		expect(readScan(`${ORIGIN}/items/%E0%A4%A`, ORIGIN)).toMatchObject({ ok: false, kind: 'malformed' });
		expect(readScan('   \r\n', ORIGIN)).toMatchObject({ ok: false, kind: 'empty' });
	});
});
