import { describe, it, expect } from 'vitest';
import fc from 'fast-check';
import { allocatableUg, reserveUg, splitBudget, type SplitInput } from '../../src/lib/domain/budget';
import { MassInputError, expanded, minimumWeight, netUncertainty } from '../../src/lib/domain/mass';

// Net-mass uncertainty for d = 1 µg, s = 0.5 µg: this project's design value (DESIGN §3.1), not a published
// one, computed with JCGM 100:2008 5.1.2 and F.2.2.1: u_net = √(2·(s² + d²/12)) = √(2·(0.25 + 0.0833)) = 0.8165 µg
const u = netUncertainty({ d: 1, s: 0.5 });
const w = (massUg: number) => ({ massUg, u });
const codes = (b: ReturnType<typeof splitBudget>) => b.issues.map((i) => i.code);

describe('split budget (DESIGN §3.3)', () => {
	it('computes the loss and its uncertainty', () => {
		const b = splitBudget(
			{ parentBefore: w(1_000_000), children: [w(300_000), w(200_000)], parentAfter: w(499_990) },
			{ tolerance: { ug: 20 } }
		);
		// L = P0 − P1 − Σc
		expect(b.lossUg).toBe(10);
		expect(b.childrenTotalUg).toBe(500_000);
		// JCGM 100:2008, 5.1.2: u_L = √(4·0.8165²) = 1.633 µg for four independent weighings
		expect(b.lossU).toBeCloseTo(1.633, 3);
		expect(b.verdict).toBe('ok');
		expect(b.issues).toEqual([]);
		expect(b.reweighed).toBe(true);
	});

	it('needs a reason when the loss exceeds a tolerance in µg', () => {
		const b = splitBudget(
			{ parentBefore: w(1_000_000), children: [w(300_000), w(200_000)], parentAfter: w(499_990) },
			{ tolerance: { ug: 9 } }
		);
		expect(b.verdict).toBe('needs-reason');
		expect(codes(b)).toEqual(['loss-above-tolerance']);
	});

	it('applies a fractional tolerance exactly (0.29 × 100 µg is 29 µg)', () => {
		// 0.29 * 100 is 28.999999999999996 in binary floating point
		const at = (p1: number) =>
			splitBudget({ parentBefore: w(100), children: [w(50)], parentAfter: w(p1) }, { tolerance: { fraction: 0.29 } });
		expect(at(21).toleranceUg).toBe(29);
		expect(at(21).lossUg).toBe(29);
		expect(at(21).verdict).toBe('ok');
		expect(at(20).verdict).toBe('needs-reason');
	});

	it('rejects mass that appears beyond 2·u_L, and accepts it within', () => {
		const tol = { tolerance: { ug: 20 } };
		// 2·u_L = 2 × 1.633 = 3.27 µg (GUM 5.1.2 with k = 2, GUM 6.2–6.3)
		const within = splitBudget({ parentBefore: w(1_000_000), children: [w(300_000), w(200_000)], parentAfter: w(500_003) }, tol);
		expect(within.lossUg).toBe(-3);
		expect(within.verdict).toBe('ok');
		const beyond = splitBudget({ parentBefore: w(1_000_000), children: [w(300_000), w(200_000)], parentAfter: w(500_004) }, tol);
		expect(beyond.lossUg).toBe(-4);
		expect(beyond.verdict).toBe('rejected');
		expect(codes(beyond)).toEqual(['mass-appeared']);
		expect(beyond.issues[0].message).toMatch(/reweigh/);
	});

	it('judges children that exceed an unweighed parent by the same rule, L < −2·u_L, as a reweighed parent (DESIGN §3.3)', () => {
		const tol = { tolerance: { ug: 20 } };
		// unweighed: u_L = √(3·0.8165²) = 1.414 µg, 2·u_L = 2.83 µg (GUM 5.1.2, k = 2)
		const one = splitBudget({ parentBefore: w(1000), children: [w(600), w(401)] }, tol);
		expect(one).toMatchObject({ verdict: 'ok', lossUg: -1, parentAfterUg: 0, reweighed: false });
		expect(one.lossU).toBeCloseTo(Math.sqrt(3) * u, 12);
		const three = splitBudget({ parentBefore: w(1000), children: [w(600), w(403)] }, tol);
		expect(three.verdict).toBe('rejected');
		expect(codes(three)).toEqual(['children-exceed-parent']);
		expect(three.issues[0].message).toMatch(/more than 2·u_L = 2\.83 µg: mass cannot appear/);
		// reweighed: the same 1 µg and 3 µg excesses, u_L = √(4·0.8165²) = 1.633, 2·u_L = 3.27 µg
		expect(splitBudget({ parentBefore: w(1000), children: [w(600), w(400)], parentAfter: w(1) }, tol).verdict).toBe('ok');
		expect(splitBudget({ parentBefore: w(1000), children: [w(600), w(400)], parentAfter: w(3) }, tol).verdict).toBe('ok');
		expect(splitBudget({ parentBefore: w(1000), children: [w(600), w(400)], parentAfter: w(4) }, tol).verdict).toBe('rejected');
		// a property: for any masses, rejection for appeared mass happens exactly when L < −2·u_L
		fc.assert(
			fc.property(fc.integer({ min: 1, max: 10_000 }), fc.array(fc.integer({ min: 1, max: 5_000 }), { minLength: 1, maxLength: 4 }), fc.option(fc.integer({ min: 0, max: 10_000 }), { nil: null }), (p0, cs, p1) => {
				const b = splitBudget({ parentBefore: w(p0), children: cs.map(w), parentAfter: p1 === null ? null : w(p1) }, { tolerance: { ug: 1_000_000 } });
				const appeared = b.issues.some((i) => i.code === 'children-exceed-parent' || i.code === 'mass-appeared');
				const uL = Math.sqrt((cs.length + 1 + (p1 === null ? 0 : 1)) * u * u);
				expect(appeared).toBe(b.lossUg < -2 * uL);
			})
		);
	});

	it('with zero uncertainty any appearing microgram is rejected', () => {
		const exact = (massUg: number) => ({ massUg, u: 0 });
		const b = splitBudget({ parentBefore: exact(100), children: [exact(60)], parentAfter: exact(41) }, { tolerance: { ug: 5 } });
		expect(b.verdict).toBe('rejected');
	});

	it('without a reweighing infers the parent after and takes the loss as 0', () => {
		const b = splitBudget({ parentBefore: w(2_184_000), children: [w(5_000), w(2_500)] }, { tolerance: { ug: 0 } });
		expect(b.reweighed).toBe(false);
		expect(b.parentAfterUg).toBe(2_176_500);
		expect(b.lossUg).toBe(0);
		expect(b.verdict).toBe('ok');
	});

	it.each<[string, SplitInput, string]>([
		['a zero child', { parentBefore: w(1000), children: [w(500), w(0)], parentAfter: w(500) }, 'child-not-positive'],
		['a negative child', { parentBefore: w(1000), children: [w(-5)], parentAfter: w(1005) }, 'child-not-positive'],
		['a negative parent after', { parentBefore: w(1000), children: [w(500)], parentAfter: w(-1) }, 'parent-after-negative'],
		['children above the parent beyond 2·u_L', { parentBefore: w(1000), children: [w(600), w(410)] }, 'children-exceed-parent'],
		['no children', { parentBefore: w(1000), children: [], parentAfter: w(1000) }, 'no-children'],
		['an empty parent', { parentBefore: w(0), children: [w(1)] }, 'parent-not-positive']
	])('rejects %s', (_, input, code) => {
		const b = splitBudget(input, { tolerance: { ug: 1_000_000 } });
		expect(b.verdict).toBe('rejected');
		expect(codes(b)).toContain(code);
	});

	it('flags children below the minimum weight and asks for a reason', () => {
		// USP <41>: d = 1 µg, s = 0.3 µg; 0.41·d = 0.41 µg exceeds s and replaces it, so m_min = 2000 × 0.41 µg = 820 µg
		// (DESIGN §3.2's check value, derived here)
		const mMin = minimumWeight({ d: 1, s: 0.3 });
		const b = splitBudget(
			{ parentBefore: w(10_000), children: [w(5_000), w(819), w(820)], parentAfter: w(3_361) },
			{ tolerance: { ug: 10 }, minimumWeightUg: mMin }
		);
		expect(b.belowMinimum).toEqual([1]);
		expect(b.verdict).toBe('needs-reason');
		expect(b.issues).toEqual([expect.objectContaining({ code: 'below-minimum-weight', child: 1 })]);
	});

	it('throws on non-integer masses and invalid uncertainties, naming the field', () => {
		const opts = { tolerance: { ug: 10 } };
		expect(() => splitBudget({ parentBefore: w(1000), children: [w(1.5)] }, opts)).toThrow(MassInputError);
		expect(() => splitBudget({ parentBefore: w(1000), children: [w(5)] }, opts)).not.toThrow();
		expect(() => splitBudget({ parentBefore: w(1000), children: [{ massUg: 5, u: -1 }] }, opts)).toThrow(/children\[0\]\.u/);
		expect(() => splitBudget({ parentBefore: w(Number.NaN), children: [w(5)] }, opts)).toThrow(/parentBefore/);
		expect(() => splitBudget({ parentBefore: w(1000), children: [w(5)] }, { tolerance: { fraction: 1.5 } })).toThrow(/fraction/);
	});

	const mass = fc.integer({ min: -(2 ** 40), max: 2 ** 40 });
	const unc = fc.double({ min: 0, max: 1000, noNaN: true });
	const inputArb = fc.record({
		parentBefore: fc.record({ massUg: mass, u: unc }),
		children: fc.array(fc.record({ massUg: mass, u: unc }), { minLength: 0, maxLength: 8 }),
		parentAfter: fc.option(fc.record({ massUg: mass, u: unc }), { nil: undefined })
	});
	// splits close to real ones: children that nearly fit the parent, a small loss or gain
	const plausibleArb = fc
		.tuple(
			fc.array(fc.nat({ max: 1_000_000 }), { minLength: 0, maxLength: 6 }),
			fc.nat({ max: 1_000_000 }),
			fc.integer({ min: -20, max: 50 }),
			fc.boolean(),
			unc
		)
		.map(([cs, rest, loss, reweighed, uc]) => {
			const total = cs.reduce((a, c) => a + c, 0);
			return {
				parentBefore: { massUg: total + rest, u: uc },
				children: cs.map((massUg) => ({ massUg, u: uc })),
				parentAfter: reweighed ? { massUg: rest - loss, u: uc } : undefined
			};
		});
	const anyInputArb = fc.oneof(inputArb, plausibleArb);
	const tolArb = fc.oneof(
		fc.record({ ug: fc.nat({ max: 2 ** 40 }) }),
		fc.record({ fraction: fc.double({ min: 0, max: 1, noNaN: true }) })
	);

	it('conserves mass exactly: P0 = P1 + Σc + L for any integers', () => {
		fc.assert(
			fc.property(anyInputArb, tolArb, (input, tolerance) => {
				const b = splitBudget(input, { tolerance });
				const sum = input.children.reduce((a, c) => a + BigInt(c.massUg), 0n);
				expect(BigInt(b.parentAfterUg) + sum + BigInt(b.lossUg)).toBe(BigInt(input.parentBefore.massUg));
				expect(b.childrenTotalUg).toBe(Number(sum));
				if (input.parentAfter) expect(b.parentAfterUg).toBe(input.parentAfter.massUg);
				// unweighed: P1 = max(0, P0 − Σc), so the loss is 0 unless the children exceed the parent
				else expect(BigInt(b.lossUg)).toBe(sum > BigInt(input.parentBefore.massUg) ? BigInt(input.parentBefore.massUg) - sum : 0n);
				expect(b.parentAfterUg).toBeGreaterThanOrEqual(input.parentAfter ? Math.min(0, input.parentAfter.massUg) : 0);
			})
		);
	});

	it('never accepts a negative or zero mass, mass from nowhere, or a loss above tolerance', () => {
		fc.assert(
			fc.property(anyInputArb, tolArb, (input, tolerance) => {
				const b = splitBudget(input, { tolerance });
				const p0 = input.parentBefore.massUg;
				const invalid =
					p0 <= 0 ||
					input.children.length === 0 ||
					input.children.some((c) => c.massUg <= 0) ||
					(input.parentAfter !== undefined && input.parentAfter.massUg < 0) ||
					b.childrenTotalUg > p0;
				if (invalid) expect(b.verdict).toBe('rejected');
				if (b.verdict !== 'rejected') {
					expect(b.parentAfterUg).toBeGreaterThanOrEqual(0);
					expect(b.lossUg).toBeGreaterThanOrEqual(-2 * b.lossU);
				}
				if (b.verdict === 'ok') {
					const limit = 'ug' in tolerance ? tolerance.ug : tolerance.fraction * p0;
					expect(b.lossUg).toBeLessThanOrEqual(limit + 1e-6 * Math.max(1, limit));
				}
			})
		);
	});
});

describe('pristine reserve (DESIGN §3.4, common curation practice)', () => {
	it('rounds the reserve up so it is never understated', () => {
		expect(reserveUg(1000, 0.7)).toBe(700);
		expect(reserveUg(1001, 0.5)).toBe(501);
		// 0.07 × 100 is 7.000000000000001 in binary floating point; exact decimal gives 7
		expect(reserveUg(100, 0.07)).toBe(7);
		expect(reserveUg(0, 0.9)).toBe(0);
		expect(() => reserveUg(1000, 1.1)).toThrow(MassInputError);
		expect(() => reserveUg(-1, 0.5)).toThrow(MassInputError);
	});

	it('is the smallest whole µg at or above pristine × fraction', () => {
		fc.assert(
			fc.property(fc.nat({ max: 2 ** 45 }), fc.integer({ min: 0, max: 1000 }), (pristine, permille) => {
				const r = BigInt(reserveUg(pristine, permille / 1000));
				const exact = BigInt(pristine) * BigInt(permille); // pristine × fraction, in thousandths of a µg
				expect(r * 1000n >= exact).toBe(true);
				expect((r - 1n) * 1000n < exact).toBe(true);
			})
		);
	});

	it('allocatable = pristine − reserve − earmarked − ⌈U⌉', () => {
		// DESIGN §5's 2.184 g return cell, 75 % reserve (0.75 × 2 184 000 µg = 1 638 000 µg), 100 mg earmarked, and
		// U = k·u_net = 2 × 0.8165 = 1.633 µg (JCGM 100:2008 6.2–6.3; design value, see above), taken up to ⌈U⌉ = 2 µg
		const U = expanded(u);
		expect(allocatableUg({ pristineUg: 2_184_000, fraction: 0.75, earmarkedUg: 100_000, expandedUg: U })).toBe(
			2_184_000 - 1_638_000 - 100_000 - 2
		);
	});

	it('is floored at zero', () => {
		expect(allocatableUg({ pristineUg: 1000, fraction: 0.5, earmarkedUg: 600, expandedUg: 0 })).toBe(0);
		expect(allocatableUg({ pristineUg: 1000, fraction: 0.5, earmarkedUg: 499, expandedUg: 0.2 })).toBe(0);
		expect(allocatableUg({ pristineUg: 1000, fraction: 0.5, earmarkedUg: 498, expandedUg: 0.2 })).toBe(1);
	});
});
