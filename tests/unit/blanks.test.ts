import { describe, it, expect } from 'vitest';
import fc from 'fast-check';
import * as ss from 'simple-statistics';
import {
	AMINO_ACIDS,
	DEFAULT_BLANK_SETTINGS,
	LIMITATIONS,
	aminoAcid,
	assessAnalyte,
	assessEnantiomers,
	blankCorrected,
	blankStatistics,
	eeMonteCarlo,
	enantiomericExcess,
	firstOrderEe,
	mean,
	replicateMean,
	sampleStandardDeviation,
	EE_DELTA
} from '../../src/lib/domain/blanks';
import { coverageFactor, validateFirstOrder } from '../../src/lib/domain/coverage';

describe('blank statistics (DESIGN §3.7)', () => {
	it('mean and sample standard deviation agree with simple-statistics', () => {
		const values = fc.array(fc.double({ min: -1e6, max: 1e6, noNaN: true, noDefaultInfinity: true }), { minLength: 2, maxLength: 40 });
		fc.assert(
			fc.property(values, (v) => {
				const scale = Math.max(1, ...v.map(Math.abs));
				expect(Math.abs(mean(v) - ss.mean(v))).toBeLessThanOrEqual(1e-9 * scale);
				expect(Math.abs(sampleStandardDeviation(v) - ss.sampleStandardDeviation(v))).toBeLessThanOrEqual(1e-9 * scale);
			})
		);
	});

	it('gives the classical LOD = b̄ + 3·s_b and LOQ = b̄ + 10·s_b beside Currie’s limits, and Currie’s decide by default', () => {
		// blanks 1, 2, 3: b̄ = 2, s_b = 1 (hand computation); classical limits after Long & Winefordner,
		// Anal. Chem. 55 (1983) 712A (the k = 3 convention), Currie's after Pure Appl. Chem. 67 (1995) 1699
		const b = blankStatistics([1, 2, 3]);
		expect(b).toMatchObject({ n: 3, mean: 2, sd: 1, classical: { lod: 5, loq: 12 }, used: 'currie', strength: 'adequate', weak: false, limitations: [] });
		expect(b.currie!.sigma0).toBeCloseTo(Math.sqrt(4 / 3), 12);
		expect(b.lodNet).toBeCloseTo(b.currie!.ld, 12);
		expect(b.lod).toBeCloseTo(2 + b.currie!.ld, 12);
	});

	it('gives no limit from one blank, and says so', () => {
		const b = blankStatistics([4.2]);
		expect(b).toMatchObject({ n: 1, mean: 4.2, sd: null, lod: null, loq: null, strength: 'single' });
		expect(b.limitations).toContain(LIMITATIONS.lodFromOneBlank);
	});

	it('marks limits from fewer blanks than the minimum, or from blanks without scatter, as weak', () => {
		const two = blankStatistics([1, 1.2]);
		expect(two.weak).toBe(true);
		expect(two.strength).toBe('weak');
		expect(two.limitations.join(' ')).toMatch(/fewer than the set minimum of 3/);
		const same = blankStatistics([1, 1, 1]);
		expect(same).toMatchObject({ sd: 0, strength: 'no-scatter', weak: true });
		expect(same.limitations).toContain(LIMITATIONS.noScatter);
		// the minimum is a setting
		expect(blankStatistics([1, 1.2, 1.1], { minBlanks: 4, limits: 'currie' }).weak).toBe(true);
		expect(blankStatistics([1, 1.2, 1.1], { minBlanks: 3, limits: 'currie' }).weak).toBe(false);
	});

	it('has nothing to say without blanks, and refuses values that are not finite', () => {
		expect(blankStatistics([])).toMatchObject({ n: 0, mean: null, lod: null, limitations: [LIMITATIONS.noBlank] });
		expect(() => blankStatistics([1, Number.NaN])).toThrow(RangeError);
		expect(() => blankCorrected({ value: 1, u: -1 }, blankStatistics([1, 2]))).toThrow(RangeError);
	});
});

describe('replicate means combine stated and observed uncertainty (JCGM 100:2008, 4.2–4.3)', () => {
	it('u² = ū_stated² + s²/n, with ν_eff from Welch–Satterthwaite', () => {
		// 9, 10, 11 each ± 0.5: s = 1, s/√3 = 0.57735; u = √(0.25 + 1/3) = 0.763763 (hand computation)
		const m = replicateMean([9, 10, 11], [0.5, 0.5, 0.5]);
		expect(m.value).toBe(10);
		expect(m.u).toBeCloseTo(Math.sqrt(0.25 + 1 / 3), 12);
		// ν_eff = u⁴ / ((1/3)²/2) (G.4.1)
		expect(m.nuEff).toBeCloseTo((0.25 + 1 / 3) ** 2 / ((1 / 3) ** 2 / 2), 9);
	});

	it('two identical replicates keep the stated uncertainty instead of giving u = 0', () => {
		const twice = replicateMean([5, 5], [0.4, 0.4]);
		expect(twice.u).toBeCloseTo(0.4, 12);
		expect(twice.nuEff).toBe(Infinity);
		expect(replicateMean([5], [0.4]).u).toBeCloseTo(0.4, 12);
		// identical replicates with nothing stated: no uncertainty, not zero
		const none = replicateMean([5, 5]);
		expect(none.u).toBeNull();
		expect(none.limitations).toContain(LIMITATIONS.identicalReplicates);
	});

	it('the replicate scatter alone gives s/√n with ν = n − 1', () => {
		const m = replicateMean([9, 10, 11]);
		expect(m.u).toBeCloseTo(1 / Math.sqrt(3), 12);
		expect(m.nuEff).toBeCloseTo(2, 12);
		expect(replicateMean([7]).u).toBeNull();
	});
});

describe('blank-corrected values and flags (DESIGN §3.7)', () => {
	it('corrects x − b̄ with u² = u_x² + s_b²·(1 + 1/n_b) (the sample’s own blank and the blank mean, as Currie’s σ₀)', () => {
		// blanks 1, 2, 3 (b̄ = 2, s_b = 1, n = 3); x = 20 ± 0.5 → 18, u = √(0.25 + 4/3) = 1.258306
		const c = blankCorrected({ value: 20, u: 0.5 }, blankStatistics([1, 2, 3]));
		expect(c.value).toBe(18);
		expect(c.u).toBeCloseTo(Math.sqrt(0.25 + 4 / 3), 6);
		// ν_eff = u⁴/((4/3)²/2), k = t₉₅(ν_eff) (GUM G.4.1, Table G.2)
		const nu = (0.25 + 4 / 3) ** 2 / ((4 / 3) ** 2 / 2);
		expect(c.nuEff).toBeCloseTo(nu, 9);
		expect(c.k).toBeCloseTo(coverageFactor(nu), 12);
		expect(c.U).toBeCloseTo(c.k! * c.u!, 12);
	});

	it('gives no uncertainty with a single blank, and says why', () => {
		const c = blankCorrected({ value: 10, u: 0.5 }, blankStatistics([2]));
		expect(c.value).toBe(8);
		expect(c.u).toBeNull();
		expect(c.limitations).toEqual([LIMITATIONS.uFromOneBlank]);
	});

	it('flags below LOD, below LOQ and blank-dominated against the chosen limits', () => {
		const classical = { ...DEFAULT_BLANK_SETTINGS, limits: 'classical' as const };
		const blanks = [1, 2, 3]; // classical LOD 5, LOQ 12 as gross levels
		expect(assessAnalyte({ value: 4.9, u: 0.1 }, blanks, classical).flags).toMatchObject({ belowLod: true, belowLoq: true, blankDominated: false });
		expect(assessAnalyte({ value: 5, u: 0.1 }, blanks, classical).flags).toMatchObject({ belowLod: false, belowLoq: true });
		expect(assessAnalyte({ value: 12, u: 0.1 }, blanks, classical).level).toBe('quantified');
		// Currie: L_D = δ·σ₀ ≈ 4.456 × 1.1547 = 5.145 net, so x = 7 (net 5) is below L_D but above L_C = 2.92 × 1.1547
		const currie = assessAnalyte({ value: 7, u: 0.1 }, blanks);
		expect(currie.flags).toMatchObject({ detected: true, belowLod: true });
		// blank-dominated: b̄ = 2 above 0.5 · 3.9 (default share, a setting)
		expect(assessAnalyte({ value: 3.9, u: 0.1 }, blanks).flags.blankDominated).toBe(true);
		expect(assessAnalyte({ value: 4, u: 0.1 }, blanks).flags.blankDominated).toBe(false);
		expect(assessAnalyte({ value: 4, u: 0.1 }, blanks, { ...DEFAULT_BLANK_SETTINGS, blankDominatedShare: 0.4 }).flags.blankDominated).toBe(true);
	});

	it('takes a corrected value ≤ 0 as below LOD even with one blank', () => {
		const r = assessAnalyte({ value: 1, u: 0.2 }, [3]);
		expect(r.flags.belowLod).toBe(true);
		expect(assessAnalyte({ value: 10, u: 0.2 }, [1]).level).toBe('unknown');
	});
});

const enantiomers = (l: number[], d: number[], bl: number[], bd: number[], u: number | null = null, seed = 1) =>
	assessEnantiomers('norvaline', { signal: replicateMean(l, l.map(() => u)), blanks: bl }, { signal: replicateMean(d, d.map(() => u)), blanks: bd }, DEFAULT_BLANK_SETTINGS, { seed });

describe('enantiomeric excess (DESIGN §3.8)', () => {
	it('check value: L = 60, D = 40, u = 1 each → ee = 20 %, u_ee = 1.44 %', () => {
		// ee per IUPAC Gold Book, "enantiomer excess": (60 − 40)/(60 + 40) = 0.20; u_ee by first-order GUM
		// propagation, u_ee = 2·√(D²·u_L² + L²·u_D²)/(L + D)² = 2·√(40² + 60²)/100² = 2 × 72.111/10 000 = 0.014422.
		// A check value from this project's design (DESIGN §3.8), not a published one.
		const r = firstOrderEe({ value: 60, u: 1 }, { value: 40, u: 1 })!;
		expect(r.ee).toBeCloseTo(0.2, 12);
		expect(r.u * 100).toBeCloseTo(1.44, 2);
		// stated uncertainties only: ν_eff = ∞, k = 1.96
		expect(r.nuEff).toBe(Infinity);
		expect(r.U).toBeCloseTo(1.96 * r.u, 3);
		expect(r.significant).toBe(true);
	});

	it('decides significance with k = t₉₅(ν_eff), not 2: few replicates widen the interval', () => {
		// ee = 4 %, with u_ee from three replicates each side: k = t₉₅(ν_eff) > 2
		const r = enantiomers([10.4, 10.9, 10.1], [9.6, 9.9, 9.2], [0.01, 0.02, 0.015, 0.01], [0.01, 0.02, 0.015, 0.01]);
		expect(r.ee.status).toBe('quantified');
		expect(r.ee.k!).toBeGreaterThan(2.3);
		expect(r.ee.U).toBeCloseTo(r.ee.k! * r.ee.u!, 12);
		expect(Math.abs(r.ee.ee!)).toBeLessThan(r.ee.U!);
		expect(r.ee.significant).toBe(false);
		// the large-sample rule |ee| > 2u would have called it significant
		expect(Math.abs(r.ee.ee!)).toBeGreaterThan(2 * r.ee.u!);
	});

	it('quotes no ee when an enantiomer is below its LOD, and says what can be said', () => {
		const r = enantiomers([2.0, 2.1, 1.9], [0.16, 0.18, 0.15], [0.3, 0.35, 0.32, 0.28], [0.12, 0.15, 0.13, 0.16]);
		expect(r.D.level).toBe('below_lod');
		expect(r.ee).toMatchObject({ status: 'not_quantifiable', ee: null, significant: null });
		expect(r.ee.instead!.detected).toBe('L');
		expect(r.ee.instead!.eeAtLeast!).toBeGreaterThan(0);
		expect(r.ee.why).toMatch(/only L is detected/);
		const neither = enantiomers([0.3, 0.31], [0.3, 0.29], [0.3, 0.35, 0.32, 0.28], [0.3, 0.35, 0.32, 0.28]);
		expect(neither.ee.status).toBe('not_quantifiable');
		expect(neither.ee.instead!.detected).toBeNull();
	});

	it('between LOD and LOQ quotes ee only with its Monte-Carlo interval, marked semi-quantitative', () => {
		const r = enantiomers([0.62, 0.66, 0.64], [0.19, 0.21, 0.2], [0.05, 0.06, 0.05, 0.06], [0.04, 0.07, 0.05, 0.08]);
		expect(r.D.level).toBe('below_loq');
		expect(r.ee.status).toBe('semi_quantitative');
		expect(r.ee.interval!.source).toBe('monte-carlo');
		expect(r.ee.interval!.low).toBe(r.ee.mc!.low);
		expect(r.ee.mc!.trials).toBe(1_000_000);
		// near the LOD the first-order interval does not pass the §8 check: the distribution is skewed
		expect(r.ee.mc!.validation!.validated).toBe(false);
		expect(r.ee.mc!.high - r.ee.ee!).toBeGreaterThan(r.ee.ee! - r.ee.mc!.low);
	});

	it('gives no ee with one blank (no limit) and none for an achiral amino acid', () => {
		const one = assessEnantiomers('norvaline', { signal: { value: 40, u: 1 }, blanks: [5] }, { signal: { value: 20, u: 1 }, blanks: [2] });
		expect(one.ee).toMatchObject({ status: 'not_assessable', ee: null });
		expect(one.limitations).toContain(LIMITATIONS.eeNoLimit);
		const x = { signal: { value: 40, u: 1 }, blanks: [4, 5, 6] };
		const aib = assessEnantiomers('AIB', x, x);
		expect(aib.ee.status).toBe('achiral');
		expect(aib.limitations).toContain(LIMITATIONS.achiral);
	});
});

describe('JCGM 101:2008 §8 validation of the first-order ee', () => {
	it('far above the limits the first-order interval is validated at δ = 0.05 % (the printed digit of ee)', () => {
		const L = { value: 60, components: [{ source: 's', u: 1, nu: Infinity }] };
		const D = { value: 40, components: [{ source: 's', u: 1, nu: Infinity }] };
		const fo = firstOrderEe(L, D)!;
		const mc = eeMonteCarlo(L, D, { seed: 8 })!;
		const v = validateFirstOrder(fo.ee, fo.U, mc, EE_DELTA);
		expect(EE_DELTA).toBe(0.0005);
		expect(v.validated).toBe(true);
	});

	it('near the LOD (L and D a few σ above zero) it is not, and the report uses the Monte-Carlo interval', () => {
		const L = { value: 0.6, components: [{ source: 's', u: 0.05, nu: 3 }] };
		const D = { value: 0.12, components: [{ source: 's', u: 0.04, nu: 3 }] };
		const fo = firstOrderEe(L, D)!;
		const mc = eeMonteCarlo(L, D, { seed: 9 })!;
		expect(validateFirstOrder(fo.ee, fo.U, mc, EE_DELTA).validated).toBe(false);
	});

	it('in the report, a quoted ee near its limits carries its Monte-Carlo check', () => {
		// both above LOQ but within twice of it: the propagation runs and its verdict is recorded
		const r = enantiomers([1.0, 1.02, 0.98], [0.5, 0.52, 0.49], [0.05, 0.07, 0.06, 0.05], [0.05, 0.07, 0.06, 0.05]);
		if (r.ee.status === 'quantified' && r.ee.mc) {
			const v = r.ee.mc.validation!;
			expect(r.ee.interval!.source).toBe(v.validated ? 'first-order' : 'monte-carlo');
		} else expect(r.ee.status).toBe('quantified');
	});
});

describe('properties (fast-check)', () => {
	const reps = fc.array(fc.double({ min: 1, max: 50, noNaN: true }), { minLength: 1, maxLength: 4 });
	const blanks = fc.array(fc.double({ min: 0, max: 0.5, noNaN: true }), { minLength: 3, maxLength: 6 });
	const stated = fc.double({ min: 0.05, max: 2, noNaN: true });

	it('duplicating every replicate never shrinks an ee’s expanded uncertainty below what the stated uncertainties give', () => {
		fc.assert(
			fc.property(reps, reps, blanks, blanks, stated, (l, d, bl, bd, u) => {
				const dup = (v: number[]) => [...v, ...v];
				const r = enantiomers(dup(l), dup(d), bl, bd, u);
				fc.pre(r.ee.U !== null);
				// the stated uncertainties alone, at the same corrected values, with ν = ∞ (k = 1.96)
				const statedOnly = firstOrderEe({ value: r.L.corrected.value!, u }, { value: r.D.corrected.value!, u })!;
				expect(r.ee.U!).toBeGreaterThanOrEqual(statedOnly.U * (1 - 1e-12));
			}),
			{ numRuns: 60 }
		);
	});

	it('an enantiomer below its LOD never yields a quoted ee', () => {
		const small = fc.array(fc.double({ min: 0, max: 2, noNaN: true }), { minLength: 1, maxLength: 3 });
		fc.assert(
			fc.property(small, small, blanks, blanks, fc.option(stated, { nil: null }), (l, d, bl, bd, u) => {
				const r = assessEnantiomers('isovaline', { signal: replicateMean(l, l.map(() => u)), blanks: bl }, { signal: replicateMean(d, d.map(() => u)), blanks: bd }, DEFAULT_BLANK_SETTINGS, { trials: 0 });
				if (r.L.level === 'below_lod' || r.D.level === 'below_lod') {
					expect(r.ee.ee).toBeNull();
					expect(r.ee.significant).toBeNull();
					expect(r.ee.status).toBe('not_quantifiable');
				}
			}),
			{ numRuns: 300 }
		);
	});

	it('a verdict never flips from not significant to significant when blanks are added that widen the blank scatter', () => {
		// two blanks at b̄ ± a·s_b (a ≥ 2) keep the blank mean and widen s_b; checked on the first-order verdict
		fc.assert(
			fc.property(reps, reps, blanks, blanks, stated, fc.double({ min: 2, max: 6, noNaN: true }), (l, d, bl, bd, u, a) => {
				const before = assessEnantiomers('isovaline', { signal: replicateMean(l, l.map(() => u)), blanks: bl }, { signal: replicateMean(d, d.map(() => u)), blanks: bd }, DEFAULT_BLANK_SETTINGS, { trials: 0 });
				fc.pre(before.ee.significant === false && before.L.blank.sd! > 0 && before.D.blank.sd! > 0);
				const widen = (b: number[]) => {
					const m = mean(b);
					const s = sampleStandardDeviation(b);
					return [...b, m + a * s, m - a * s];
				};
				const after = assessEnantiomers('isovaline', { signal: replicateMean(l, l.map(() => u)), blanks: widen(bl) }, { signal: replicateMean(d, d.map(() => u)), blanks: widen(bd) }, DEFAULT_BLANK_SETTINGS, { trials: 0 });
				expect(after.L.blank.sd!).toBeGreaterThan(before.L.blank.sd!);
				expect(after.ee.significant).not.toBe(true);
			}),
			{ numRuns: 300 }
		);
	});
});

describe('amino acids and possible terrestrial contamination (DESIGN §3.8)', () => {
	it('knows protein and non-protein amino acids by name and abbreviation', () => {
		expect(aminoAcid('Isovaline')).toMatchObject({ kind: 'non-protein', chiral: true });
		expect(aminoAcid('alpha-aminoisobutyric acid')).toMatchObject({ abbreviation: 'AIB', kind: 'non-protein', chiral: false });
		expect(aminoAcid('nva')?.name).toBe('norvaline');
		expect(aminoAcid('Ala')).toMatchObject({ name: 'alanine', kind: 'protein' });
		expect(aminoAcid('unobtainine')).toBeNull();
		expect(AMINO_ACIDS.filter((a) => a.kind === 'protein')).toHaveLength(20);
	});

	const bl = [4, 5, 6]; // b̄ 5, s 1
	const bd = [1, 2, 3]; // b̄ 2, s 1

	it('flags an L-excess in a protein amino acid with a high blank share, and not for a non-protein one', () => {
		// alanine: L 40 ± 1, D 20 ± 1 → corrected 35 and 18, ee = 17/53; blank share (5 + 2)/60 = 0.117 ≥ 0.1
		const l = { signal: { value: 40, u: 1 }, blanks: bl };
		const d = { signal: { value: 20, u: 1 }, blanks: bd };
		const r = assessEnantiomers('alanine', l, d);
		expect(r.ee.ee).toBeCloseTo(17 / 53, 12);
		expect(r.blankShare).toBeCloseTo(7 / 60, 12);
		expect(r.flags.possibleTerrestrialContamination).toBe(true);
		expect(assessEnantiomers('isovaline', l, d).flags.possibleTerrestrialContamination).toBe(false);
		// L 400, D 200: share 7/600 < 0.1
		expect(assessEnantiomers('alanine', { ...l, signal: { value: 400, u: 1 } }, { ...d, signal: { value: 200, u: 1 } }).flags.possibleTerrestrialContamination).toBe(false);
		// a D-excess is not what terrestrial biology leaves
		const dEx = assessEnantiomers('alanine', { ...l, signal: { value: 20, u: 1 } }, { ...d, signal: { value: 60, u: 1 } });
		expect(dEx.ee.excess).toBe('D');
		expect(dEx.flags.possibleTerrestrialContamination).toBe(false);
	});

	it('cannot judge an unknown analyte', () => {
		const unknown = assessEnantiomers('unobtainine', { signal: { value: 40, u: 1 }, blanks: bl }, { signal: { value: 20, u: 1 }, blanks: bd });
		expect(unknown.flags.possibleTerrestrialContamination).toBeNull();
		expect(unknown.limitations).toContain(LIMITATIONS.unknownAminoAcid);
	});

	it('keeps the old entry point: enantiomericExcess of two assessed enantiomers', () => {
		const L = assessAnalyte({ value: 40, u: 1 }, bl);
		const D = assessAnalyte({ value: 20, u: 1 }, bd);
		expect(enantiomericExcess(L, D).ee).toBeCloseTo(17 / 53, 12);
	});
});
