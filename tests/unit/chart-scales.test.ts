import { describe, it, expect } from 'vitest';
import {
	decadeLabel,
	decades,
	dodge,
	linearAxis,
	logAxis,
	massAxis,
	massDecadeLabel,
	massUnit,
	percentAxis,
	stepFormat,
	tickStep,
	timeAxis,
	utcTickLabel,
	wantsLog
} from '../../src/lib/components/chart-scales';

const UG = { µg: 1, mg: 1000, g: 1_000_000 } as const;

/** A step is "round" when it is 1, 2 or 5 × 10ⁿ (d3-scale's nice steps; common practice for axes, no published source). */
function isRoundStep(step: number): boolean {
	const e = Math.floor(Math.log10(step) + 1e-9);
	const m = step / 10 ** e;
	return [1, 2, 5, 10].some((k) => Math.abs(m - k) < 1e-9);
}

// awkward ranges in µg, from 0.0001 mg (0.1 µg) to 3 g, including the ledger's old 1881.785–2266.388 mg
const AWKWARD: [number, number][] = [
	[0.1, 0.37],
	[0.1, 0.1003],
	[0.123, 0.9876],
	[1, 7],
	[3.3, 997],
	[999, 1001],
	[12_345, 12_351],
	[1_881_785, 2_266_388],
	[2_183_998, 2_184_002],
	[0, 3_000_000],
	[1_000_001, 2_999_999],
	[2_999_000, 3_000_000]
];

describe('mass axes: round ticks for awkward ranges', () => {
	for (const [lo, hi] of AWKWARD) {
		it(`${lo} µg to ${hi} µg`, () => {
			const a = massAxis([lo, hi], [200, 0]);
			const k = UG[a.unit as keyof typeof UG];
			const inUnit = a.ticks.map((t) => Number((t.value / k).toPrecision(12)));
			const step = tickStep(inUnit);
			expect(a.ticks.length).toBeGreaterThanOrEqual(3);
			expect(a.ticks.length).toBeLessThanOrEqual(11);
			expect(isRoundStep(step)).toBe(true);
			for (const v of inUnit) expect(Math.abs(v / step - Math.round(v / step))).toBeLessThan(1e-6);
			// the axis covers the data, and every label reads back as its tick's value in the axis's unit
			const [d0, d1] = a.scale.domain();
			expect(d0).toBeLessThanOrEqual(lo);
			expect(d1).toBeGreaterThanOrEqual(hi);
			for (const t of a.ticks) {
				expect(t.label.endsWith(` ${a.unit}`)).toBe(true);
				expect(Number(t.label.replace(` ${a.unit}`, '').replace('−', '-'))).toBe(Number((t.value / k).toPrecision(12)));
			}
			expect(new Set(a.ticks.map((t) => t.label)).size).toBe(a.ticks.length);
		});
	}

	it('the ledger that read 2266.388 / 2044.087 / 1881.785 mg now reads whole hundreds of mg', () => {
		const a = massAxis([1_881_785, 2_266_388], [200, 0]);
		expect(a.ticks.map((t) => t.label)).toEqual(['1800 mg', '1900 mg', '2000 mg', '2100 mg', '2200 mg', '2300 mg']);
		expect(a.scale.domain()).toEqual([1_800_000, 2_300_000]);
	});

	it('labels carry only the decimals the step needs', () => {
		expect(massAxis([100, 370], [200, 0]).ticks.map((t) => t.label)).toEqual(['100 µg', '150 µg', '200 µg', '250 µg', '300 µg', '350 µg', '400 µg']);
		expect(massAxis([0.1, 0.37], [200, 0]).ticks[1].label).toBe('0.15 µg');
		expect(massAxis([2_183_998, 2_184_002], [200, 0]).ticks.map((t) => t.label)).toContain('2184.000 mg');
		expect(stepFormat(0.05)(-0.1)).toBe('−0.10');
	});

	it('reads in µg below 1 mg, in mg below 10 g and in g above', () => {
		expect(massUnit(999)).toBe('µg');
		expect(massUnit(1000)).toBe('mg');
		expect(massUnit(9_999_999)).toBe('mg');
		expect(massUnit(212_400_000)).toBe('g');
	});

	it('a flat range still gets an axis around its value', () => {
		const a = linearAxis([5, 5], [100, 0]);
		expect(a.scale.domain()[0]).toBeLessThan(5);
		expect(a.scale.domain()[1]).toBeGreaterThan(5);
	});
});

describe('log axes place decades correctly', () => {
	it('decades are whole powers of ten around the values, computed exactly', () => {
		expect(decades(0.7, 2_500_000)).toEqual([0.1, 1, 10, 100, 1000, 10_000, 100_000, 1_000_000, 10_000_000]);
		expect(decades(0.001, 0.001)).toEqual([0.001, 0.01]);
		expect(decades(1e-4, 3e-3)).toEqual([1e-4, 1e-3, 1e-2]);
		expect(() => decades(0, 10)).toThrow(/positive/);
	});

	it('each decade is the same distance from the next, and 10^k sits at k/(decades) of the range', () => {
		const a = logAxis([0.023, 14.8], [200, 0]);
		const major = a.ticks.filter((t) => !t.minor);
		expect(major.map((t) => t.value)).toEqual([0.01, 0.1, 1, 10, 100]);
		const px = major.map((t) => a.scale(t.value));
		for (let i = 0; i < px.length; i++) expect(px[i]).toBeCloseTo(200 - (i * 200) / (px.length - 1), 9);
		// 2 × 10ⁿ sits log10(2) ≈ 0.301 of the way up its decade, 5 × 10ⁿ log10(5) ≈ 0.699
		const decade = 200 / (px.length - 1);
		expect(a.scale(0.2)).toBeCloseTo(px[1] - Math.log10(2) * decade, 9);
		expect(a.scale(5)).toBeCloseTo(px[2] - Math.log10(5) * decade, 9);
		expect(a.ticks.filter((t) => t.minor).map((t) => t.value).slice(0, 8)).toEqual([0.02, 0.03, 0.04, 0.05, 0.06, 0.07, 0.08, 0.09].map((v) => expect.closeTo(v, 12)));
	});

	it('labels decades as plain numbers where short and as powers of ten beyond', () => {
		expect([0.001, 0.01, 1, 100_000].map(decadeLabel)).toEqual(['0.001', '0.01', '1', '100000']);
		expect(decadeLabel(1e6)).toBe('10⁶');
		expect(decadeLabel(1e-4)).toBe('10⁻⁴');
		expect([0.1, 1, 100, 1000, 1e5, 1e6, 1e8, 1e9].map(massDecadeLabel)).toEqual(['0.1 µg', '1 µg', '100 µg', '1 mg', '100 mg', '1 g', '100 g', '1 kg']);
	});

	it('wants a log axis when the values span two decades or more', () => {
		expect(wantsLog([0.02, 0.05, 4.5])).toBe(true);
		expect(wantsLog([2, 15, 9])).toBe(false);
		expect(wantsLog([0, 0, 3])).toBe(false);
	});
});

describe('time and percent axes', () => {
	it('ticks fall on round UTC times and are labelled in UTC', () => {
		const a = timeAxis(['2026-03-01T10:17:00Z', '2026-03-05T11:40:00Z'], [0, 800]);
		for (const t of a.ticks) expect(new Date(t.value).getUTCMinutes()).toBe(0);
		const midnight = a.ticks.find((t) => new Date(t.value).getUTCHours() === 0)!;
		expect(midnight.label).toMatch(/^0[2-5] Mar$/);
		expect(utcTickLabel(new Date('2026-03-04T12:00:00Z'))).toBe('12:00');
		expect(utcTickLabel(new Date('2026-03-01T00:00:00Z'))).toBe('Mar 2026');
		expect(utcTickLabel(new Date('2026-01-01T00:00:00Z'))).toBe('2026');
		expect(() => timeAxis([], [0, 1])).toThrow(/instant/);
	});

	it('a single instant still gets an axis around it', () => {
		const a = timeAxis(['2026-03-01T10:00:00Z'], [0, 800]);
		expect(a.scale(new Date('2026-03-01T10:00:00Z'))).toBeCloseTo(400, 6);
		expect(a.ticks.length).toBeGreaterThan(1);
		// its ticks show times only, so the axis names the day
		expect(a.day).toBe('1 Mar 2026');
		expect(timeAxis(['2026-03-01T10:00:00Z', '2026-03-04T10:00:00Z'], [0, 800]).day).toBeNull();
	});

	it('an ee axis is symmetric about 0 % with round percent steps', () => {
		const a = percentAxis(0.37, [0, 600]);
		const values = a.ticks.map((t) => t.value);
		expect(values).toContain(0);
		expect(a.scale.domain()[0]).toBe(-a.scale.domain()[1]);
		expect(isRoundStep(tickStep(values) * 100)).toBe(true);
		expect(a.ticks.find((t) => t.value === 0)!.label).toBe('0 %');
		expect(a.ticks[0].label.startsWith('−')).toBe(true);
	});
});

describe('dodge: marks that share an instant are spread apart in order', () => {
	it('keeps marks that do not crowd where they are', () => {
		expect(dodge([10, 100, 200], 20, 0, 300)).toEqual([10, 100, 200]);
	});
	it('centres a crowd on its mean, at least the gap apart, inside the bounds', () => {
		const out = dodge([150, 150, 150, 150], 20, 0, 300);
		expect(out).toEqual([120, 140, 160, 180]);
		const edge = dodge([0, 0, 0], 20, 0, 300);
		expect(edge).toEqual([0, 20, 40]);
		const many = dodge(Array(40).fill(150), 20, 0, 300);
		expect(many[0]).toBeGreaterThanOrEqual(0);
		expect(many[39]).toBeLessThanOrEqual(300 + 1e-9);
		for (let i = 1; i < many.length; i++) expect(many[i] - many[i - 1]).toBeGreaterThan(0);
	});
	it('merges a crowd that reaches its neighbour', () => {
		const out = dodge([100, 100, 100, 135], 20, 0, 300);
		for (let i = 1; i < out.length; i++) expect(out[i] - out[i - 1]).toBeCloseTo(20, 9);
	});
});
