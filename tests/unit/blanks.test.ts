import { describe, it, expect } from 'vitest';
import fc from 'fast-check';
import * as ss from 'simple-statistics';
import {
	AMINO_ACIDS,
	LIMITATIONS,
	aminoAcid,
	assessAnalyte,
	assessEnantiomers,
	blankCorrected,
	blankStatistics,
	enantiomericExcess,
	mean,
	replicateMean,
	sampleStandardDeviation
} from '../../src/lib/domain/blanks';

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

	it('gives LOD = b̄ + 3·s_b and LOQ = b̄ + 10·s_b', () => {
		// blanks 1, 2, 3: b̄ = 2, s_b = 1 (hand computation); limits per Currie, Pure Appl. Chem. 67 (1995) 1699,
		// and Long & Winefordner, Anal. Chem. 55 (1983) 712A
		const b = blankStatistics([1, 2, 3]);
		expect(b).toMatchObject({ n: 3, mean: 2, sd: 1, lod: 5, loq: 12, limitations: [] });
	});

	it('states that LOD cannot be estimated from one blank instead of giving a number', () => {
		const b = blankStatistics([4.2]);
		expect(b.mean).toBe(4.2);
		expect(b.sd).toBeNull();
		expect(b.lod).toBeNull();
		expect(b.loq).toBeNull();
		expect(b.limitations).toContain('LOD cannot be estimated from one blank.');
	});

	it('has nothing to say without blanks', () => {
		expect(blankStatistics([])).toMatchObject({ n: 0, mean: null, lod: null, limitations: [LIMITATIONS.noBlank] });
	});

	it('rejects values that are not finite numbers', () => {
		expect(() => blankStatistics([1, Number.NaN])).toThrow(RangeError);
		expect(() => blankCorrected({ value: 1, u: -1 }, blankStatistics([1, 2]))).toThrow(RangeError);
	});
});

describe('blank-corrected values and flags (DESIGN §3.7)', () => {
	it('corrects x − b̄ with u = √(u_x² + s_b²/n_b) (first-order GUM, JCGM 100:2008 5.1.2)', () => {
		// blanks 1, 2, 3 (b̄ = 2, s_b = 1, n = 3); x = 20 ± 0.5 → 18, u = √(0.25 + 1/3) = 0.763763
		const c = blankCorrected({ value: 20, u: 0.5 }, blankStatistics([1, 2, 3]));
		expect(c.value).toBe(18);
		expect(c.u).toBeCloseTo(0.763763, 6);
	});

	it('keeps a negative corrected value as it is (below the blank)', () => {
		const c = blankCorrected({ value: 1.5, u: 0.1 }, blankStatistics([1, 2, 3]));
		expect(c.value).toBe(-0.5);
	});

	it('gives no uncertainty with a single blank, and says why', () => {
		const c = blankCorrected({ value: 10, u: 0.5 }, blankStatistics([2]));
		expect(c.value).toBe(8);
		expect(c.u).toBeNull();
		expect(c.limitations).toEqual([LIMITATIONS.uFromOneBlank]);
	});

	it('flags below LOD, below LOQ and blank-dominated at the thresholds', () => {
		const blanks = [1, 2, 3]; // LOD 5, LOQ 12
		expect(assessAnalyte({ value: 4.9, u: 0.1 }, blanks).flags).toEqual({ belowLod: true, belowLoq: true, blankDominated: false });
		expect(assessAnalyte({ value: 5, u: 0.1 }, blanks).flags).toEqual({ belowLod: false, belowLoq: true, blankDominated: false });
		expect(assessAnalyte({ value: 12, u: 0.1 }, blanks).flags).toEqual({ belowLod: false, belowLoq: false, blankDominated: false });
		// blank-dominated: b̄ = 2 above 0.5 · 3.9 (default share, a setting)
		expect(assessAnalyte({ value: 3.9, u: 0.1 }, blanks).flags.blankDominated).toBe(true);
		expect(assessAnalyte({ value: 4, u: 0.1 }, blanks).flags.blankDominated).toBe(false);
		expect(assessAnalyte({ value: 4, u: 0.1 }, blanks, { blankDominatedShare: 0.4, highBlankShare: 0.1 }).flags.blankDominated).toBe(true);
		expect(assessAnalyte({ value: 4, u: 0.1 }, blanks).blankShare).toBe(0.5);
	});

	it('leaves the LOD and LOQ flags open with a single blank', () => {
		const r = assessAnalyte({ value: 10, u: 0.2 }, [1]);
		expect(r.flags).toEqual({ belowLod: null, belowLoq: null, blankDominated: false });
		expect(r.limitations).toContain('LOD cannot be estimated from one blank.');
	});

	it('takes replicate means with the standard deviation of the mean (JCGM 100:2008, 4.2.3)', () => {
		// 9, 10, 11: mean 10, s = 1, u = 1/√3
		const m = replicateMean([9, 10, 11]);
		expect(m.value).toBe(10);
		expect(m.u).toBeCloseTo(1 / Math.sqrt(3), 12);
		expect(replicateMean([7]).u).toBeNull();
	});
});

/** Seeded PRNG (mulberry32, a public-domain 32-bit generator) and Box–Muller normal deviates. */
function normalSource(seed: number) {
	let a = seed >>> 0;
	const uniform = () => {
		a = (a + 0x6d2b79f5) >>> 0;
		let t = a;
		t = Math.imul(t ^ (t >>> 15), t | 1);
		t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
		return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
	};
	return () => {
		const u1 = 1 - uniform();
		return Math.sqrt(-2 * Math.log(u1)) * Math.cos(2 * Math.PI * uniform());
	};
}

describe('enantiomeric excess (DESIGN §3.8)', () => {
	it('check value: L = 60, D = 40, u = 1 each → ee = 20 %, u_ee = 1.44 %', () => {
		// ee per IUPAC Gold Book, "enantiomer excess": (60 − 40)/(60 + 40) = 0.20; u_ee by first-order GUM
		// propagation, u_ee = 2·√(D²·u_L² + L²·u_D²)/(L + D)² = 2·√(40² + 60²)/100² = 2 × 72.111/10 000 = 0.014422.
		// A check value from this project's design (DESIGN §3.8), not a published one.
		const r = enantiomericExcess({ value: 60, u: 1 }, { value: 40, u: 1 });
		expect(r.ee).toBeCloseTo(0.2, 12);
		expect(r.u! * 100).toBeCloseTo(1.44, 2);
		expect(r.excess).toBe('L');
		expect(r.significant).toBe(true);
	});

	it('u_ee agrees with a seeded Monte-Carlo propagation within 5 % (JCGM 101:2008, GUM Supplement 1)', () => {
		const cases = [
			{ L: 60, uL: 1, D: 40, uD: 1 },
			{ L: 12, uL: 0.8, D: 9, uD: 0.5 },
			{ L: 5, uL: 0.3, D: 15, uD: 1.2 }
		];
		const draw = normalSource(20310314);
		const M = 200_000;
		for (const c of cases) {
			const analytic = enantiomericExcess({ value: c.L, u: c.uL }, { value: c.D, u: c.uD }).u!;
			let sum = 0;
			let sum2 = 0;
			for (let i = 0; i < M; i++) {
				const l = c.L + c.uL * draw();
				const d = c.D + c.uD * draw();
				const ee = (l - d) / (l + d);
				sum += ee;
				sum2 += ee * ee;
			}
			const mcMean = sum / M;
			const mcSd = Math.sqrt((sum2 - M * mcMean * mcMean) / (M - 1));
			expect(Math.abs(mcSd - analytic) / analytic).toBeLessThan(0.05);
		}
	});

	it('calls an excess significant only when |ee| > 2·u_ee', () => {
		// L = 51, D = 49, u = 1: ee = 0.02, u_ee = 2·√(49² + 51²)/100² = 0.014142 → 2u = 0.0283 > 0.02
		const small = enantiomericExcess({ value: 51, u: 1 }, { value: 49, u: 1 });
		expect(small.ee).toBeCloseTo(0.02, 12);
		expect(small.significant).toBe(false);
		const dExcess = enantiomericExcess({ value: 30, u: 1 }, { value: 70, u: 1 });
		expect(dExcess.ee).toBeCloseTo(-0.4, 12);
		expect(dExcess.excess).toBe('D');
		expect(dExcess.significant).toBe(true);
	});

	it('is not defined when L + D = 0 or a corrected abundance is negative', () => {
		expect(enantiomericExcess({ value: 0, u: 1 }, { value: 0, u: 1 })).toMatchObject({ ee: null, u: null, limitations: [LIMITATIONS.eeSumZero] });
		expect(enantiomericExcess({ value: 5, u: 1 }, { value: -0.2, u: 1 })).toMatchObject({ ee: null, limitations: [LIMITATIONS.eeNegative] });
		// D exactly zero after correction: a full L-excess
		expect(enantiomericExcess({ value: 5, u: 1 }, { value: 0, u: 1 }).ee).toBe(1);
	});

	it('stays within [−1, 1] for non-negative abundances', () => {
		const v = fc.double({ min: 0, max: 1e6, noNaN: true });
		fc.assert(
			fc.property(v, v, (l, d) => {
				const r = enantiomericExcess({ value: l, u: 1 }, { value: d, u: 1 });
				return l + d === 0 ? r.ee === null : r.ee! >= -1 && r.ee! <= 1 && r.u! >= 0;
			})
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

	const blanksL = [4, 5, 6]; // b̄ 5, s 1
	const blanksD = [1, 2, 3]; // b̄ 2, s 1

	it('flags an L-excess in a protein amino acid with a high blank share', () => {
		// alanine: L 40 ± 1, D 20 ± 1 → corrected 35 and 18, ee = 17/53; blank share (5 + 2)/60 = 0.117 ≥ 0.1
		const r = assessEnantiomers('alanine', { signal: { value: 40, u: 1 }, blanks: blanksL }, { signal: { value: 20, u: 1 }, blanks: blanksD });
		expect(r.ee.ee).toBeCloseTo(17 / 53, 12);
		expect(r.blankShare).toBeCloseTo(7 / 60, 12);
		expect(r.flags.possibleTerrestrialContamination).toBe(true);
	});

	it('does not flag the same numbers for a non-protein amino acid, nor a protein one with a low blank share', () => {
		const l = { signal: { value: 40, u: 1 }, blanks: blanksL };
		const d = { signal: { value: 20, u: 1 }, blanks: blanksD };
		expect(assessEnantiomers('isovaline', l, d).flags.possibleTerrestrialContamination).toBe(false);
		// L 400, D 200: share 7/600 = 0.0117 < 0.1
		const low = assessEnantiomers('alanine', { ...l, signal: { value: 400, u: 1 } }, { ...d, signal: { value: 200, u: 1 } });
		expect(low.flags.possibleTerrestrialContamination).toBe(false);
		// a D-excess is not what terrestrial biology leaves
		const dEx = assessEnantiomers('alanine', { ...l, signal: { value: 20, u: 1 } }, { ...d, signal: { value: 40, u: 1 } });
		expect(dEx.ee.excess).toBe('D');
		expect(dEx.flags.possibleTerrestrialContamination).toBe(false);
	});

	it('gives no ee for an achiral amino acid and cannot judge an unknown analyte', () => {
		const x = { signal: { value: 40, u: 1 }, blanks: blanksL };
		const aib = assessEnantiomers('AIB', x, x);
		expect(aib.ee.ee).toBeNull();
		expect(aib.limitations).toContain(LIMITATIONS.achiral);
		const unknown = assessEnantiomers('unobtainine', x, { signal: { value: 20, u: 1 }, blanks: blanksD });
		expect(unknown.flags.possibleTerrestrialContamination).toBeNull();
		expect(unknown.limitations).toContain(LIMITATIONS.unknownAminoAcid);
	});

	it('carries the single-blank limitation into ee', () => {
		const r = assessEnantiomers('norvaline', { signal: { value: 40, u: 1 }, blanks: [5] }, { signal: { value: 20, u: 1 }, blanks: [2] });
		expect(r.ee.ee).toBeCloseTo(17 / 53, 12);
		expect(r.ee.u).toBeNull();
		expect(r.ee.significant).toBeNull();
		expect(r.limitations).toEqual(expect.arrayContaining(['LOD cannot be estimated from one blank.', LIMITATIONS.eeNoU]));
	});
});
