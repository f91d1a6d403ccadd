import { describe, it, expect } from 'vitest';
import fc from 'fast-check';
import { ATMOSPHERES, type Atmosphere } from '../../src/lib/domain/exposure';
import { minimumWeight, netUncertainty } from '../../src/lib/domain/mass';
import { NO_EXPOSURE, constraintMisses, type OfferConstraints, type OfferExposure } from '../../src/lib/domain/offer';
import { CRITERIA, planAllocation, type Criterion, type PlanBalance, type PlanCandidate, type PlanInput } from '../../src/lib/domain/planner';

// ---- independent restatements of the rules, written for the test (not imported from the planner)

/** The test's own exposure score, as the planner documents it: 1000·ambient + 10·cleanroom + the rest, per class rounded. */
function score(e: OfferExposure): number {
	const t = e.total;
	return 1000 * Math.round(t.ambient_air) + 10 * Math.round(t.cleanroom_air) + Math.round(t.nitrogen_glovebox) + Math.round(t.argon_glovebox) + Math.round(t.vacuum);
}

/** Does the item meet the request's constraints and the collection's rules? Written out field by field. */
function qualifies(it: PlanCandidate, c: OfferConstraints): boolean {
	if (it.exposure.violations > 0) return false;
	if (c.kind && it.kind !== c.kind) return false;
	if (c.minMassUg !== undefined && it.massUg < c.minMassUg) return false;
	if (c.neverAmbient && it.exposure.total.ambient_air > 0) return false;
	for (const a of ATMOSPHERES) if (c.maxMinutes?.[a] !== undefined && it.exposure.total[a] > c.maxMinutes[a]!) return false;
	if (c.minCoverage !== undefined && it.blankCoverage !== null && it.blankCoverage < c.minCoverage) return false;
	return true;
}

/** The balance for a piece (m_min ≤ piece), holding the heaviest load within its capacity, smallest u. */
function balanceFor(bs: readonly PlanBalance[], piece: number, heaviest = piece): PlanBalance | null {
	return [...bs].filter((b) => b.minimumWeightUg <= piece && (b.capacityUg == null || b.capacityUg >= heaviest)).sort((a, b) => a.netUUg - b.netUUg || a.minimumWeightUg - b.minimumWeightUg || (a.name < b.name ? -1 : 1))[0] ?? null;
}

type Scores = Record<Criterion, number>;
const lexLess = (a: Scores, b: Scores, order: readonly Criterion[]) => {
	for (const c of order) if (a[c] !== b[c]) return a[c] - b[c];
	return 0;
};

/** Every feasible plan by brute force: each item unused, handed over whole, or cut into 1…pieces pieces. */
function bruteBest(input: PlanInput, order: readonly Criterion[]): Scores | null {
	const piece = Math.floor(input.massUg / input.pieces);
	const b = balanceFor(input.balances, piece);
	if (!b || piece <= 0) return null;
	const loss = input.expectedLossUg;
	const items = input.items.filter((it) => (!input.itemCodes.length || input.itemCodes.includes(it.code)) && qualifies(it, input.constraints));
	let best: Scores | null = null;
	const choose = (i: number, left: number, taken: number, s: Scores) => {
		if (taken > input.budgetUg) return;
		if (i === items.length) {
			if (left === 0 && (!best || lexLess(s, best, order) < 0)) best = { ...s };
			return;
		}
		const it = items[i];
		choose(i + 1, left, taken, s);
		const e = score(it.exposure);
		if (left >= 1 && it.massUg <= piece && it.massUg >= Math.ceil(piece * 0.95) && it.massUg >= b.minimumWeightUg) {
			choose(i + 1, left - 1, taken + it.massUg, { exposure: s.exposure + e, depth: s.depth + it.depth, splits: s.splits, fragmentation: s.fragmentation, reserve: s.reserve + it.massUg });
		}
		// the pieces go on b; the parent left behind is reweighed on b when b holds it, else on the
		// finest balance that does, whose minimum weight it must keep
		const after1 = it.massUg - piece - loss;
		const own =
			b.capacityUg == null || b.capacityUg >= after1
				? b
				: ([...input.balances].filter((x) => x.capacityUg == null || x.capacityUg >= after1).sort((x, y) => x.netUUg - y.netUUg || x.minimumWeightUg - y.minimumWeightUg || (x.name < y.name ? -1 : 1))[0] ?? null);
		for (let n = 1; own && n <= left; n++) {
			if (it.massUg - n * piece - loss < own.minimumWeightUg) break;
			const t = n * piece + loss;
			choose(i + 1, left - n, taken + t, { exposure: s.exposure + n * e, depth: s.depth + n * (it.depth + 1), splits: s.splits + 1, fragmentation: s.fragmentation + it.massUg, reserve: s.reserve + t });
		}
	};
	choose(0, input.pieces, 0, { exposure: 0, depth: 0, splits: 0, fragmentation: 0, reserve: 0 });
	return best;
}

// ---- random collections

const minutes = fc.record(Object.fromEntries(ATMOSPHERES.map((a) => [a, fc.oneof(fc.constant(0), fc.integer({ min: 1, max: 300 }))])) as Record<Atmosphere, fc.Arbitrary<number>>);
const exposureArb = fc.tuple(minutes, fc.boolean(), fc.integer({ min: 0, max: 9 })).map(([total, inheritedAll, v]): OfferExposure => ({
	total, own: inheritedAll ? NO_EXPOSURE.own : total, inherited: inheritedAll ? total : NO_EXPOSURE.inherited, everAmbient: total.ambient_air > 0, violations: v === 0 ? 1 : 0
}));
const itemArb = (i: number) =>
	fc.record({
		massUg: fc.integer({ min: 200, max: 40_000 }),
		uUg: fc.double({ min: 0, max: 3, noNaN: true }),
		depth: fc.integer({ min: 0, max: 4 }),
		exposure: fc.oneof(fc.constant(NO_EXPOSURE), exposureArb),
		blankCoverage: fc.oneof(fc.constant(null), fc.double({ min: 0, max: 1, noNaN: true })),
		kind: fc.constantFrom('specimen' as const, 'aliquot' as const)
	}).map((x): PlanCandidate => ({ ...x, code: `X${i}` }));
const itemsArb = fc.integer({ min: 1, max: 8 }).chain((n) => fc.tuple(...Array.from({ length: n }, (_, i) => itemArb(i))));
// capacities, when recorded, in the range of the items' masses, so they decide which balance a split can use
const balancesArb = fc.array(
	fc.record({ d: fc.constantFrom(0.1, 1, 10), s: fc.double({ min: 0.05, max: 1, noNaN: true }), capacity: fc.option(fc.integer({ min: 1_000, max: 50_000 }), { nil: null }) }),
	{ minLength: 1, maxLength: 3 }
).map((bs) => bs.map((b, i): PlanBalance => ({ id: `b${i}`, name: `balance ${i}`, minimumWeightUg: minimumWeight(b), netUUg: netUncertainty(b), capacityUg: b.capacity })));
// each constraint is present in about one case in four, so most collections still have plans
const sometimes = <T,>(a: fc.Arbitrary<T>) => fc.option(a, { freq: 3, nil: undefined });
const constraintsArb = fc
	.record({
		neverAmbient: sometimes(fc.constant(true)),
		minCoverage: sometimes(fc.double({ min: 0, max: 1, noNaN: true })),
		minMassUg: sometimes(fc.integer({ min: 100, max: 20_000 })),
		maxMinutes: sometimes(fc.record({ cleanroom_air: fc.integer({ min: 0, max: 200 }) })),
		kind: sometimes(fc.constantFrom('specimen' as const, 'aliquot' as const))
	})
	.map((c) => Object.fromEntries(Object.entries(c).filter(([, v]) => v !== undefined)) as OfferConstraints);
const orderArb = fc.shuffledSubarray([...CRITERIA], { minLength: CRITERIA.length, maxLength: CRITERIA.length }) as fc.Arbitrary<Criterion[]>;
const inputArb = fc
	.record({
		items: itemsArb,
		balances: balancesArb,
		pieces: fc.integer({ min: 1, max: 3 }),
		pieceUg: fc.integer({ min: 150, max: 6_000 }),
		constraints: constraintsArb,
		budgetUg: fc.oneof(fc.integer({ min: 0, max: 20_000 }), fc.constant(1_000_000)),
		expectedLossUg: fc.integer({ min: 0, max: 60 }),
		order: orderArb,
		pick: fc.boolean()
	})
	.map((r): PlanInput => ({
		massUg: r.pieceUg * r.pieces,
		pieces: r.pieces,
		constraints: r.constraints,
		itemCodes: r.pick ? r.items.filter((_, i) => i % 2 === 0).map((x) => x.code) : [],
		items: r.items,
		balances: r.balances,
		budgetUg: r.budgetUg,
		reserveUg: 100_000,
		expectedLossUg: r.expectedLossUg,
		tolerance: { ug: 1_000 },
		order: r.order
	}));

describe('allocation planner (DESIGN §3.11), on random collections', () => {
	it('never breaks the reserve, a minimum weight, a rule or a constraint', () => {
		fc.assert(
			fc.property(inputArb, (input) => {
				const r = planAllocation(input);
				const piece = Math.floor(input.massUg / input.pieces);
				for (const p of r.plans) {
					let taken = 0;
					let pieces = 0;
					const used = new Set<string>();
					for (const s of p.steps) {
						const it = input.items.find((x) => x.code === s.parentCode)!;
						expect(used.has(it.code)).toBe(false);
						used.add(it.code);
						if (input.itemCodes.length) expect(input.itemCodes).toContain(it.code);
						expect(qualifies(it, input.constraints)).toBe(true);
						expect(constraintMisses(it, input.constraints)).toEqual([]);
						if (s.action === 'split') {
							const b = input.balances.find((x) => x.id === s.balanceId)!;
							expect(b).toBeDefined();
							for (const c of s.childrenUg) {
								expect(c).toBe(piece);
								// USP <41>: every child weighed on the balance reaches its minimum weight
								expect(c).toBeGreaterThanOrEqual(b.minimumWeightUg);
							}
							expect(s.parentAfterUg).toBe(it.massUg - s.childrenUg.reduce((a, c) => a + c, 0) - input.expectedLossUg);
							// the parent is reweighed on its own balance (the pieces' unless that cannot hold it)
							const pb = input.balances.find((x) => x.id === s.parentBalanceId)!;
							expect(pb).toBeDefined();
							expect(s.parentAfterUg).toBeGreaterThanOrEqual(pb.minimumWeightUg);
							// and no load above a balance's capacity
							if (b.capacityUg != null) expect(Math.max(...s.childrenUg)).toBeLessThanOrEqual(b.capacityUg);
							if (pb.capacityUg != null) expect(s.parentAfterUg).toBeLessThanOrEqual(pb.capacityUg);
							if (pb.id !== b.id) expect(b.capacityUg).toBeLessThan(s.parentAfterUg + (s.childrenUg.length - 1) * piece);
							taken += s.childrenUg.reduce((a, c) => a + c, 0) + input.expectedLossUg;
							pieces += s.childrenUg.length;
						} else {
							expect(it.massUg).toBeLessThanOrEqual(piece);
							expect(it.massUg).toBeGreaterThanOrEqual(Math.ceil(piece * 0.95));
							taken += it.massUg;
							pieces += 1;
						}
					}
					expect(pieces).toBe(input.pieces);
					// the pristine reserve: nothing beyond what the collection can give
					expect(taken).toBe(p.takenUg);
					expect(taken).toBeLessThanOrEqual(input.budgetUg);
				}
			}),
			{ numRuns: 500 }
		);
	});

	it('ranks first a plan never worse, on the curator’s order, than the best found by brute force (up to 8 items)', () => {
		fc.assert(
			fc.property(inputArb, (input) => {
				const r = planAllocation(input);
				const best = bruteBest(input, input.order!);
				if (best === null) {
					expect(r.plans).toEqual([]);
					return;
				}
				expect(r.plans.length).toBeGreaterThan(0);
				expect(lexLess(r.plans[0].scores, best, input.order!)).toBeLessThanOrEqual(0);
				// and the plans come in the curator's order
				for (let i = 1; i < r.plans.length; i++) expect(lexLess(r.plans[i - 1].scores, r.plans[i].scores, input.order!)).toBeLessThanOrEqual(0);
			}),
			{ numRuns: 1000 }
		);
	});

	it('re-plans on the reduced input (what the browser gets) to the same top plans under any order', () => {
		fc.assert(
			fc.property(inputArb, orderArb, (input, order) => {
				const full = planAllocation(input);
				const keep = new Set(full.keptCodes);
				const again = planAllocation({ ...input, items: input.items.filter((x) => keep.has(x.code)), order });
				const direct = planAllocation({ ...input, order });
				expect(again.plans.map((p) => p.scores)).toEqual(direct.plans.map((p) => p.scores));
			}),
			{ numRuns: 150 }
		);
	});
});

describe('allocation planner, worked cases', () => {
	// USP General Chapter <41> (DESIGN §3.2): d = 1 µg, s = 0.3 µg → m_min = 2000·max(0.3, 0.41) = 820 µg
	const balance: PlanBalance = { id: 'mb', name: 'micro', minimumWeightUg: minimumWeight({ d: 1, s: 0.3 }), netUUg: netUncertainty({ d: 1, s: 0.3 }) };
	const item = (code: string, massUg: number, depth = 0, exposure = NO_EXPOSURE): PlanCandidate => ({ code, kind: depth ? 'aliquot' : 'specimen', massUg, uUg: 0.5, depth, exposure, blankCoverage: null });
	const base: PlanInput = { massUg: 1_000, pieces: 1, constraints: {}, itemCodes: [], items: [], balances: [balance], budgetUg: 1_000_000, reserveUg: 0, expectedLossUg: 10, tolerance: { ug: 200 } };

	it('keeps the parent at or above the balance’s minimum weight (820 µg, USP <41>)', () => {
		expect(balance.minimumWeightUg).toBe(820);
		// 1000 µg piece + 10 µg loss + 820 µg the parent keeps = 1830 µg needed
		const short = planAllocation({ ...base, items: [item('A', 1_829)] });
		expect(short.plans).toEqual([]);
		expect(short.ruledOut[0].reason).toContain('0.820 mg minimum weight');
		const just = planAllocation({ ...base, items: [item('A', 1_830)] });
		expect(just.plans[0].steps[0]).toMatchObject({ action: 'split', childrenUg: [1_000], parentAfterUg: 820, balanceId: 'mb' });
	});

	it('weighs a split on a balance that holds the parent left behind, and rules out a parent no balance holds', () => {
		// the micro balance above holds 60 mg; a semi-micro one (d = 10 µg, s = 1 µg: m_min = 2000·max(1, 4.1) = 8.2 mg) holds 200 g
		const micro = { ...balance, capacityUg: 60_000 };
		const semi: PlanBalance = { id: 'sm', name: 'semi-micro', minimumWeightUg: minimumWeight({ d: 10, s: 1 }), netUUg: netUncertainty({ d: 10, s: 1 }), capacityUg: 200_000_000 };
		expect(semi.minimumWeightUg).toBe(8_200);
		// a 1 mg piece from a 50 mg parent: on the micro balance (49 mg left behind fits under its 60 mg)
		const small = planAllocation({ ...base, balances: [micro, semi], items: [item('A', 50_000)] });
		expect(small.plans[0].steps[0]).toMatchObject({ balanceId: 'mb', parentAfterUg: 48_990 });
		expect(small.plans[0].steps[0]).toMatchObject({ parentBalanceId: 'mb' });
		// from a 90 mg parent: the 1 mg piece on the micro balance, the 88.99 mg left behind (above its
		// 60 mg) reweighed on the semi-micro one, whose 8.2 mg minimum weight it keeps
		const big = planAllocation({ ...base, balances: [micro, semi], items: [item('B', 90_000)] });
		expect(big.plans[0].steps[0]).toMatchObject({ balanceId: 'mb', childrenUg: [1_000], parentAfterUg: 88_990, parentBalanceId: 'sm', parentMinimumWeightUg: 8_200 });
		// with no balance that holds the parent, the parent is ruled out, saying so
		const none = planAllocation({ ...base, balances: [micro, { ...semi, capacityUg: 80_000 }], items: [item('B', 90_000)] });
		expect(none.plans).toEqual([]);
		expect(none.ruledOut[0].reason).toBe('B holds 90.000 mg; no usable balance can reweigh the 88.990 mg it keeps after a 1.000 mg piece (the largest, semi-micro, holds 80.000 mg)');
	});

	it('refuses a piece below every balance’s minimum weight, and says so', () => {
		const r = planAllocation({ ...base, massUg: 500, items: [item('A', 50_000)] });
		expect(r.plans).toEqual([]);
		expect(r.blocked.join(' ')).toMatch(/below the minimum weight of every usable balance/);
	});

	it('never plans into the reserve', () => {
		const r = planAllocation({ ...base, budgetUg: 999, items: [item('A', 50_000)] });
		expect(r.plans).toEqual([]);
		expect(r.blocked.join(' ')).toMatch(/without cutting into its pristine reserve/);
	});

	it('serves glovebox-only requests from the deeper aliquot when the shallow pieces met ambient air', () => {
		const air: OfferExposure = { ...NO_EXPOSURE, total: { ...NO_EXPOSURE.total, ambient_air: 8 }, own: { ...NO_EXPOSURE.own, ambient_air: 8 }, everAmbient: true };
		const r = planAllocation({ ...base, constraints: { neverAmbient: true }, items: [item('ROOT', 900_000, 0, air), item('CHIP', 90_000, 1, air), item('POWDER', 30_000, 2)] });
		expect(r.plans.map((p) => p.steps[0].parentCode)).toEqual(['POWDER']);
		expect(r.ruledOut.map((x) => x.code).sort()).toEqual(['CHIP', 'ROOT']);
		expect(r.ruledOut[0].reason).toMatch(/ambient air/);
	});

	it('puts the closest ruled-out candidate first', () => {
		const r = planAllocation({ ...base, massUg: 5_000, items: [item('FAR', 1_000), item('NEAR', 5_800), item('MID', 3_000)] });
		expect(r.ruledOut.map((x) => x.code)).toEqual(['NEAR', 'MID', 'FAR']);
	});

	it('solves two pieces from one item or two with the programme, and explains the ranks', () => {
		const items = [item('BIG', 100_000, 0), item('SMALL', 3_000, 1), item('WHOLE', 990, 2)];
		const r = planAllocation({ ...base, massUg: 2_000, pieces: 2, items });
		expect(r.method).toBe('mixed-integer programme');
		expect(r.plans.length).toBeGreaterThan(1);
		expect(r.plans[0].why[0]).toMatch(/^Ranked 1st/);
		expect(r.plans[1].why[0]).toMatch(/^Ranked 2nd: behind plan 1 on/);
		expect(r.plans[1].gaveUp.length).toBeGreaterThan(0);
		// the usual order: both pieces from BIG (depth 1 + 1); with "most reserve kept" first, WHOLE goes as it is (990 + 1010 µg taken, not 2010)
		expect(r.plans[0].steps.map((s) => [s.parentCode, s.action, s.childrenUg.length])).toEqual([['BIG', 'split', 2]]);
		const reserveFirst = planAllocation({ ...base, massUg: 2_000, pieces: 2, order: ['reserve', 'exposure', 'depth', 'splits', 'fragmentation'], items });
		expect(reserveFirst.plans[0].takenUg).toBe(2_000);
		expect(reserveFirst.plans[0].steps.map((s) => s.action).sort()).toEqual(['split', 'whole']);
	});
});
