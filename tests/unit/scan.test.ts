import { describe, it, expect } from 'vitest';
import { readScan } from '../../src/lib/domain/scan';
import { formatCode } from '../../src/lib/domain/codes';

const ORIGIN = 'https://regolog.brightwater.example';
const good = formatCode('TRN', 42); // TRN-00042-G (ISO/IEC 7064 MOD 37,36)
const wrongCheck = good.slice(0, -1) + (good.endsWith('H') ? 'J' : 'H');

describe('scan input', () => {
	it('takes a typed or wedge-scanned code, in any case, with the scanner\'s trailing Enter', () => {
		expect(good).toBe('TRN-00042-G');
		expect(readScan(good, ORIGIN)).toEqual({ ok: true, code: good });
		expect(readScan(' trn-00042-g\r\n', ORIGIN)).toEqual({ ok: true, code: good });
		expect(readScan('TRN–00042–G', ORIGIN)).toEqual({ ok: true, code: good });
	});

	it('takes the URL of a label from this origin', () => {
		expect(readScan(`${ORIGIN}/items/${good}`, ORIGIN)).toEqual({ ok: true, code: good });
		expect(readScan(`${ORIGIN}/items/${good}/`, ORIGIN)).toEqual({ ok: true, code: good });
		expect(readScan(`HTTPS://REGOLOG.BRIGHTWATER.EXAMPLE/items/${good}`, ORIGIN)).toEqual({ ok: true, code: good });
		expect(readScan(`${ORIGIN}/items/${good}?from=label`, ORIGIN)).toEqual({ ok: true, code: good });
	});

	it('refuses a wrong check character (ISO/IEC 7064:2003 MOD 37,36), as a code and inside a URL', () => {
		const a = readScan(wrongCheck, ORIGIN);
		expect(a.ok).toBe(false);
		expect(a).toMatchObject({ kind: 'check' });
		expect(!a.ok && a.reason).toMatch(/^Check character is [0-9A-Z], expected G/);
		expect(readScan(`${ORIGIN}/items/${wrongCheck}`, ORIGIN)).toMatchObject({ ok: false, kind: 'check' });
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
		expect(readScan('TRN-42', ORIGIN)).toMatchObject({ ok: false, kind: 'malformed' });
		expect(readScan('hello world', ORIGIN)).toMatchObject({ ok: false, kind: 'malformed' });
		expect(readScan('regolog.brightwater.example/items/TRN-00042-G', ORIGIN)).toMatchObject({ ok: false, kind: 'malformed' });
		expect(readScan(`${ORIGIN}/items/%E0%A4%A`, ORIGIN)).toMatchObject({ ok: false, kind: 'malformed' });
		expect(readScan('   \r\n', ORIGIN)).toMatchObject({ ok: false, kind: 'empty' });
	});
});
