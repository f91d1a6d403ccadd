/**
 * The blank-control statistics against their published sources: JCGM 100:2008 (GUM) Annex H.1 and
 * Table G.2, Currie (1995), JCGM 101:2008 §9 and §8, and a second statistics package.
 */
import { describe, it, expect } from 'vitest';
import * as ss from 'simple-statistics';
import tQuantileStdlib from '@stdlib/stats-base-dists-t-quantile';
import {
	adjustPValues,
	combined,
	coverageFactor,
	monteCarlo,
	numericalTolerance,
	tQuantile,
	validateFirstOrder,
	welchSatterthwaite,
	type Component
} from '../../src/lib/domain/coverage';
import { currieDelta, currieLimits, blankStatistics, mean, sampleStandardDeviation } from '../../src/lib/domain/blanks';

describe('Welch–Satterthwaite and t (JCGM 100:2008)', () => {
	it('Annex H.1 end-gauge calibration: ν_eff ≈ 16 and t₉₉(16) = 2.92 (values typed from memory of H.1.6)', () => {
		// Contributions c·u in nm and their degrees of freedom as in Table H.1 (from memory): the
		// standard's calibration 25 nm (ν = 18), the measured difference 9.7 nm (ν = 25.6), the
		// thermal-expansion difference 2.9 nm (ν = 50), the temperature difference 16.6 nm (ν = 2);
		// the two contributions of zero sensitivity add nothing. u_c = 32 nm, ν_eff = 16 (truncated).
		const components: Component[] = [
			{ source: 'l_s', u: 25, nu: 18 },
			{ source: 'd', u: 9.7, nu: 25.6 },
			{ source: 'δα', u: 2.9, nu: 50 },
			{ source: 'δθ', u: 16.6, nu: 2 }
		];
		expect(combined(components)).toBeCloseTo(31.7, 1); // printed as 32 nm
		const nu = welchSatterthwaite(components);
		expect(nu).toBeGreaterThan(16);
		expect(nu).toBeLessThan(17);
		// k = t₉₉(ν_eff) with ν_eff truncated to 16 (G.4.1): 2.92, U₉₉ = 2.92 × 32 nm = 93 nm
		expect(coverageFactor(nu, 0.99)).toBeCloseTo(2.92, 2);
		expect(Math.round(coverageFactor(nu, 0.99) * 32)).toBe(93);
	});

	it('Table G.2, 95 % column: t = 12.71, 4.30, 2.31, 2.09 at ν = 1, 2, 8, 20, and 1.960 at ν = ∞', () => {
		expect(tQuantile(0.975, 1)).toBeCloseTo(12.71, 2);
		expect(tQuantile(0.975, 2)).toBeCloseTo(4.3, 2);
		expect(tQuantile(0.975, 8)).toBeCloseTo(2.31, 2);
		expect(tQuantile(0.975, 20)).toBeCloseTo(2.09, 2);
		expect(coverageFactor(Infinity)).toBeCloseTo(1.96, 3);
		// a non-integer ν is truncated (G.4.1): ν = 8.9 takes t(8)
		expect(coverageFactor(8.9)).toBe(tQuantile(0.975, 8));
	});

	it('ν_eff of one Type A component is its own ν; stated components with ν = ∞ leave it larger', () => {
		expect(welchSatterthwaite([{ source: 'a', u: 1, nu: 4 }])).toBeCloseTo(4, 12);
		// two equal components, ν = 4 and ∞: ν_eff = (2u²)²/(u⁴/4) = 16
		expect(welchSatterthwaite([{ source: 'a', u: 1, nu: 4 }, { source: 'b', u: 1, nu: Infinity }])).toBeCloseTo(16, 12);
		expect(welchSatterthwaite([{ source: 'b', u: 1, nu: Infinity }])).toBe(Infinity);
	});
});

describe('cross-checks against second packages (simple-statistics, @stdlib t quantile)', () => {
	it('means and standard deviations agree with simple-statistics', () => {
		for (const v of [[2.1, 2.6, 1.9, 2.4], [0.02, 0.03, 0.02, 0.03], [1, 2, 3], [1e6 + 0.1, 1e6 + 0.2, 1e6 + 0.4]]) {
			expect(mean(v)).toBeCloseTo(ss.mean(v), 9);
			expect(sampleStandardDeviation(v)).toBeCloseTo(ss.sampleStandardDeviation(v), 9);
		}
	});

	it('t quantiles from jstat agree with @stdlib/stats-base-dists-t-quantile', () => {
		for (const nu of [1, 2, 3, 5, 8, 13, 20, 50, 200]) {
			for (const p of [0.95, 0.975, 0.995]) expect(Math.abs(tQuantile(p, nu) - tQuantileStdlib(p, nu))).toBeLessThan(1e-6);
		}
	});
});

describe('Currie’s limits (L. A. Currie, Pure Appl. Chem. 67 (1995) 1699), α = β = 0.05', () => {
	it('σ_B = 0.1, n = 5: σ₀ = σ_B·√(1 + 1/n), L_C = t₀.₉₅(4)·σ₀, L_D = δ·σ₀, L_Q = 10·σ₀', () => {
		const c = currieLimits(0.1, 5);
		const sigma0 = 0.1 * Math.sqrt(1 + 1 / 5);
		expect(c.sigma0).toBeCloseTo(sigma0, 12);
		expect(c.nu).toBe(4);
		expect(c.t).toBeCloseTo(2.132, 3); // one-sided t₀.₉₅(4), Table G.2's 90 % column
		expect(c.lc).toBeCloseTo(2.132 * sigma0, 3);
		expect(c.ld).toBeCloseTo(c.delta * sigma0, 12);
		expect(c.lq).toBeCloseTo(10 * sigma0, 12);
		// the paper's approximation δ ≈ 2t·4ν/(4ν + 1) for α = β (typed from memory) lies within 2 % of the exact δ at ν = 4
		expect(Math.abs(c.delta - (2 * c.t * 16) / 17) / c.delta).toBeLessThan(0.02);
	});

	it('with σ known (ν → ∞), L_C = 1.645·σ₀ and L_D = 3.29·σ₀, the paper’s classic values', () => {
		expect(currieDelta(Infinity)).toBeCloseTo(3.29, 2);
		expect(currieDelta(1e6)).toBeCloseTo(3.29, 2);
		expect(tQuantile(0.95, Infinity)).toBeCloseTo(1.645, 3);
	});

	it('δ tends to 2t·4ν/(4ν + 1) as ν grows, and is larger for very few blanks', () => {
		for (const nu of [5, 9, 20]) {
			const t = tQuantile(0.95, nu);
			expect(Math.abs(currieDelta(nu) - (2 * t * 4 * nu) / (4 * nu + 1)) / currieDelta(nu)).toBeLessThan(0.01);
		}
		expect(currieDelta(1)).toBeGreaterThan(10);
	});

	it('the classical limits are b̄ + 3·s_b and b̄ + 10·s_b (G. L. Long and J. D. Winefordner, Anal. Chem. 55 (1983) 712A; the k = 3 convention)', () => {
		// blanks 1, 2, 3: b̄ = 2, s_b = 1 (hand computation)
		const b = blankStatistics([1, 2, 3], { minBlanks: 3, limits: 'classical' });
		expect(b.classical).toEqual({ lod: 5, loq: 12 });
		expect(b.lod).toBe(5);
		expect(b.loq).toBe(12);
	});
});

describe('GUM Supplement 1 Monte-Carlo (JCGM 101:2008)', () => {
	it('§9.2.2 additive model, four Gaussian inputs of u = 1: 95 % interval ±3.92, and §8 validates the GUM interval', () => {
		const mc = monteCarlo((n) => n() + n() + n() + n(), { seed: 91 });
		// the GUM interval: y = 0, u(y) = 2, U = 1.96 × 2 = 3.92; printed with two significant digits of u(y) = 2.0, δ = 0.05
		const delta = numericalTolerance(-1);
		expect(mc.low).toBeCloseTo(-3.92, 1);
		expect(mc.high).toBeCloseTo(3.92, 1);
		expect(validateFirstOrder(0, 1.96 * 2, mc, delta).validated).toBe(true);
	});

	it('§9.2.3 additive model, four rectangular inputs of u = 1: the interval ±3.88 (value typed from memory), narrower than the GUM’s ±3.92', () => {
		const r3 = Math.sqrt(3);
		const mc = monteCarlo((_, u) => (2 * u() - 1) * r3 + (2 * u() - 1) * r3 + (2 * u() - 1) * r3 + (2 * u() - 1) * r3, { seed: 92 });
		expect(Math.abs(mc.low + 3.88)).toBeLessThan(0.02);
		expect(Math.abs(mc.high - 3.88)).toBeLessThan(0.02);
		expect(mc.sd).toBeCloseTo(2, 2);
		// §9.2.3 finds the GUM interval validated at δ = 0.05 (two significant digits of u), not at 0.005
		expect(validateFirstOrder(0, 3.92, mc, 0.05).validated).toBe(true);
		expect(validateFirstOrder(0, 3.92, mc, 0.005).validated).toBe(false);
	});

	it('is reproducible: the same seed gives the same interval', () => {
		const a = monteCarlo((n) => n() * 2 + 1, { seed: 5, trials: 10_000 });
		const b = monteCarlo((n) => n() * 2 + 1, { seed: 5, trials: 10_000 });
		expect(a).toEqual(b);
	});
});

describe('multiple comparisons', () => {
	it('Holm and Benjamini–Hochberg on a worked set (hand computation of the step-down and step-up rules)', () => {
		const p = [0.01, 0.04, 0.03, 0.005];
		// Holm: sorted 0.005, 0.01, 0.03, 0.04 × 4, 3, 2, 1 → 0.02, 0.03, 0.06, 0.06 (monotone)
		expect(adjustPValues(p, 'holm').map((x) => +x.toFixed(6))).toEqual([0.03, 0.06, 0.06, 0.02]);
		// BH: 0.005·4/1 = 0.02, 0.01·4/2 = 0.02, 0.03·4/3 = 0.04, 0.04·4/4 = 0.04
		expect(adjustPValues(p, 'bh').map((x) => +x.toFixed(6))).toEqual([0.02, 0.04, 0.04, 0.02]);
		expect(adjustPValues(p, 'none')).toEqual(p);
	});
});
