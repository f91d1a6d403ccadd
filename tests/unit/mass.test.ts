import { describe, it, expect } from 'vitest';
import fc from 'fast-check';
import {
	formatCapacity,
	MassInputError,
	assertMicrograms,
	decimalsForReadability,
	expanded,
	formatMg,
	minimumWeight,
	netUncertainty,
	parseMgToUg,
	readingUncertainty,
	scaleUg
} from '../../src/lib/domain/mass';

describe('uncertainty (JCGM 100:2008)', () => {
	it('reading uncertainty is d/√12 ≈ 0.29·d', () => {
		// JCGM 100:2008, F.2.2.1: resolution δx gives u = δx/√12 = 0.29·δx
		expect(readingUncertainty(1)).toBeCloseTo(0.2887, 4);
		expect(readingUncertainty(0.1)).toBeCloseTo(0.02887, 5);
	});

	it('net mass: d = 1 µg, s = 0.5 µg → u_net = 0.8165 µg, U = 1.633 µg', () => {
		// This project's design value (DESIGN §3.1), not a published one, computed with JCGM 100:2008 5.1.2 (gross
		// and tare independent) and F.2.2.1 (d/√12): u_net = √(2·(s² + d²/12)) = √(2·(0.25 + 0.0833)) = 0.8165 µg
		const u = netUncertainty({ d: 1, s: 0.5 });
		expect(u).toBeCloseTo(0.8165, 4);
		// JCGM 100:2008, 6.2–6.3: U = k·u with k = 2
		expect(expanded(u)).toBeCloseTo(1.633, 3);
	});

	it('coverage factor can be chosen', () => {
		// JCGM 100:2008, 6.3: U = k·u for the chosen k
		expect(expanded(0.5, 3)).toBe(1.5);
	});

	it('refuses negative or non-finite inputs', () => {
		expect(() => readingUncertainty(-1)).toThrow(RangeError);
		expect(() => netUncertainty({ d: 1, s: Number.NaN })).toThrow(RangeError);
		expect(() => expanded(Number.POSITIVE_INFINITY)).toThrow(RangeError);
	});
});

describe('minimum weight (USP <41>)', () => {
	it('d = 1 µg, s = 0.3 µg → 820 µg', () => {
		// USP <41>: 0.41·d replaces s when larger; 0.41·1 µg > 0.3 µg, so m_min = 2000 × 0.41 µg = 820 µg
		// (DESIGN §3.2's check value, derived here)
		expect(minimumWeight({ d: 1, s: 0.3 })).toBe(820);
	});

	it('repeatability governs when s > 0.41·d', () => {
		// USP <41>: 2·s/m ≤ 0.10 % → m_min = 2000·s = 2000·0.25 µg
		expect(minimumWeight({ d: 0.1, s: 0.25 })).toBe(500);
	});

	it('is exact: 820 × 1.1 µg is 902 µg, not 903 from binary rounding', () => {
		// USP <41> formula in decimal arithmetic; 820 * 1.1 in binary floating point is 902.0000000000001
		expect(820 * 1.1).toBeGreaterThan(902);
		expect(minimumWeight({ d: 1.1, s: 0 })).toBe(902);
	});

	it('rounds a fractional result up to whole µg', () => {
		// USP <41>: 2000·0.41·0.55 = 451 exactly; 2000·0.2504 = 500.8 → 501
		expect(minimumWeight({ d: 0.55, s: 0 })).toBe(451);
		expect(minimumWeight({ d: 0.1, s: 0.2504 })).toBe(501);
	});
});

describe('scaleUg', () => {
	it('rounds products of typed decimals exactly', () => {
		// 0.07 × 100 = 7 exactly; binary floating point gives 7.000000000000001
		expect(scaleUg(100, 0.07, 'ceil')).toBe(7);
		// 0.29 × 100 = 29 exactly; binary floating point gives 28.999999999999996
		expect(scaleUg(100, 0.29, 'floor')).toBe(29);
		expect(scaleUg(1001, 0.5, 'ceil')).toBe(501);
		expect(scaleUg(1001, 0.5, 'floor')).toBe(500);
		expect(scaleUg(3, 1e-7, 'ceil')).toBe(1);
	});
});

describe('formatMg', () => {
	it('formats integer µg as exact mg text', () => {
		// DESIGN §5: the 2.184 g return cell
		expect(formatMg(2184000, 3)).toBe('2184.000 mg');
		expect(formatMg(5, 3)).toBe('0.005 mg');
		expect(formatMg(12345, 4)).toBe('12.3450 mg');
		expect(formatMg(0, 0)).toBe('0 mg');
		expect(formatMg(-2, 3)).toBe('-0.002 mg');
		expect(formatMg(Number.MAX_SAFE_INTEGER, 3)).toBe('9007199254740.991 mg');
	});

	it('rounds halves away from zero below 1 µg resolution', () => {
		expect(formatMg(12345, 2)).toBe('12.35 mg');
		expect(formatMg(12344, 2)).toBe('12.34 mg');
		expect(formatMg(1500, 0)).toBe('2 mg');
		expect(formatMg(-12345, 2)).toBe('-12.35 mg');
		expect(formatMg(-4, 2)).toBe('0.00 mg');
	});

	it('refuses non-integer µg and bad decimals', () => {
		expect(() => formatMg(1.5, 3)).toThrow(RangeError);
		expect(() => formatMg(Number.NaN, 3)).toThrow(RangeError);
		expect(() => formatMg(1, -1)).toThrow(RangeError);
	});

	it('agrees with the mass to within half a unit of the last decimal', () => {
		fc.assert(
			fc.property(fc.integer({ min: -1e12, max: 1e12 }), fc.integer({ min: 0, max: 6 }), (ug, dec) => {
				const shown = Number.parseFloat(formatMg(ug, dec));
				expect(Math.abs(shown - ug / 1000)).toBeLessThanOrEqual(0.5 * 10 ** -dec + 1e-6);
			})
		);
	});
});

describe('formatCapacity', () => {
	it('writes a capacity in grams without trailing zeros', () => {
		expect(formatCapacity(2_100_000)).toBe('2.1 g');
		expect(formatCapacity(220_000_000)).toBe('220 g');
		expect(formatCapacity(1)).toBe('0.000001 g');
		expect(formatCapacity(1_234_567_000_000)).toBe('1,234,567 g');
	});
});

describe('decimalsForReadability', () => {
	it('shows as many mg decimals as the balance indicates', () => {
		expect(decimalsForReadability(0.1)).toBe(4);
		expect(decimalsForReadability(1)).toBe(3);
		expect(decimalsForReadability(10)).toBe(2);
		expect(decimalsForReadability(100)).toBe(1);
		expect(decimalsForReadability(1000)).toBe(0);
		expect(decimalsForReadability(0.5)).toBe(4);
		expect(decimalsForReadability(2)).toBe(3);
		expect(decimalsForReadability(0.01)).toBe(5);
	});

	it('refuses zero or negative readability', () => {
		expect(() => decimalsForReadability(0)).toThrow(RangeError);
		expect(() => decimalsForReadability(-1)).toThrow(RangeError);
	});
});

describe('parseMgToUg', () => {
	it('reads mg text as exact µg', () => {
		expect(parseMgToUg('12.345')).toBe(12345);
		expect(parseMgToUg('2184')).toBe(2184000);
		expect(parseMgToUg('0.5')).toBe(500);
		expect(parseMgToUg(' 12.3 mg ')).toBe(12300);
		expect(parseMgToUg('12.3450')).toBe(12345);
		expect(parseMgToUg('0')).toBe(0);
		expect(parseMgToUg('9007199254740.991')).toBe(Number.MAX_SAFE_INTEGER);
	});

	it.each([
		['12.3456', /more decimals than a microgram/],
		['0.0001', /more decimals than a microgram/],
		['-1', /must not be negative/],
		['−1', /must not be negative/],
		['1,5', /decimal separator/],
		['1e3', /not a mass/],
		['NaN', /not a mass/],
		['Infinity', /not a mass/],
		['', /empty/],
		['   ', /empty/],
		['12.', /not a mass/],
		['.5', /not a mass/],
		['+1', /not a mass/],
		['0x10', /not a mass/],
		['1 000', /not a mass/],
		['9007199254740.992', /too large/]
	])('refuses %j', (text, message) => {
		expect(() => parseMgToUg(text, 'childMass')).toThrow(message);
		try {
			parseMgToUg(text, 'childMass');
		} catch (e) {
			expect(e).toBeInstanceOf(MassInputError);
			expect((e as MassInputError).field).toBe('childMass');
		}
	});

	it('round-trips with formatMg for every safe µg value', () => {
		fc.assert(
			fc.property(fc.nat({ max: Number.MAX_SAFE_INTEGER }), fc.integer({ min: 3, max: 9 }), (ug, dec) => {
				expect(parseMgToUg(formatMg(ug, dec))).toBe(ug);
			})
		);
	});

	it('reads any decimal with up to 3 places and prints it back canonically', () => {
		const digit = fc.constantFrom(...'0123456789'.split(''));
		fc.assert(
			fc.property(
				fc.string({ unit: digit, minLength: 1, maxLength: 10 }),
				fc.string({ unit: digit, minLength: 0, maxLength: 3 }),
				(whole, frac) => {
					const text = frac ? `${whole}.${frac}` : whole;
					expect(formatMg(parseMgToUg(text), 3)).toBe(`${BigInt(whole)}.${frac.padEnd(3, '0')} mg`);
				}
			)
		);
	});
});

describe('assertMicrograms', () => {
	it('accepts safe positive integers, and zero only when allowed', () => {
		expect(() => assertMicrograms(1, 'mass')).not.toThrow();
		expect(() => assertMicrograms(Number.MAX_SAFE_INTEGER, 'mass')).not.toThrow();
		expect(() => assertMicrograms(0, 'mass', { allowZero: true })).not.toThrow();
	});

	it.each([0, -1, 1.5, Number.NaN, Number.POSITIVE_INFINITY, 2 ** 53, '5', null, undefined, 5n])(
		'refuses %s and names the field',
		(value) => {
			expect(() => assertMicrograms(value, 'parentAfter')).toThrow(/parentAfter/);
			try {
				assertMicrograms(value, 'parentAfter');
			} catch (e) {
				expect(e).toBeInstanceOf(MassInputError);
				expect((e as MassInputError).field).toBe('parentAfter');
			}
		}
	);
});
