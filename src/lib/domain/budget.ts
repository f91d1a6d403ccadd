/**
 * Split budget (DESIGN §3.3) and pristine reserve (DESIGN §3.4). Masses are integer µg;
 * u values are standard uncertainties in µg. Runs the same in the browser preview and on the server.
 */
import { MassInputError, formatMg, scaleUg } from './mass';

export interface Weighed {
	massUg: number;
	/** standard uncertainty of this mass, µg */
	u: number;
}

export interface SplitInput {
	parentBefore: Weighed;
	children: Weighed[];
	/** the parent reweighed after the split; omit when it was not reweighed */
	parentAfter?: Weighed | null;
}

export type LossTolerance = { ug: number } | { fraction: number };

export interface SplitOptions {
	/** the collection's loss tolerance, in µg or as a fraction of the parent-before mass */
	tolerance: LossTolerance;
	/** children lighter than this (e.g. the balance's USP <41> minimum weight) are flagged */
	minimumWeightUg?: number;
}

export type SplitIssueCode =
	| 'no-children'
	| 'parent-not-positive'
	| 'child-not-positive'
	| 'parent-after-negative'
	| 'children-exceed-parent'
	| 'mass-appeared'
	| 'loss-above-tolerance'
	| 'below-minimum-weight';

export interface SplitIssue {
	code: SplitIssueCode;
	severity: 'rejected' | 'needs-reason';
	message: string;
	/** index of the child concerned, when there is one */
	child?: number;
}

export interface SplitBudget {
	verdict: 'ok' | 'needs-reason' | 'rejected';
	issues: SplitIssue[];
	/** false when the parent was not reweighed: P1 = max(0, P0 − Σc) is inferred and the loss is 0 unless the children exceed the parent */
	reweighed: boolean;
	childrenTotalUg: number;
	parentAfterUg: number;
	/** L = P0 − P1 − Σc, exact */
	lossUg: number;
	/** u_L = √(u₀² + u₁² + Σuᵢ²); 0 when not reweighed and the loss is 0 (it was not measured) */
	lossU: number;
	toleranceUg: number;
	belowMinimum: number[];
}

function wholeUg(value: number, field: string): bigint {
	if (!Number.isSafeInteger(value)) throw new MassInputError(field, `${field} must be a whole number of micrograms, got ${value}`);
	return BigInt(value);
}

function uncertainty(u: number, field: string): number {
	if (!Number.isFinite(u) || u < 0) throw new MassInputError(field, `${field} must be a finite uncertainty ≥ 0 µg, got ${u}`);
	return u;
}

function fraction(f: number, field: string): number {
	if (!Number.isFinite(f) || f < 0 || f > 1) throw new MassInputError(field, `${field} must be a fraction from 0 to 1, got ${f}`);
	return f;
}

/**
 * Mass budget of one split: loss L = P0 − P1 − Σcᵢ and its standard uncertainty
 * u_L = √(u₀² + u₁² + Σuᵢ²) for independent inputs (JCGM 100:2008, 5.1.2).
 *
 * One rule for mass that appears (DESIGN §3.3), stated once: **rejected when L < −2·u_L** — the
 * masses after the split exceed the parent before by more than the measurement can explain. It
 * applies alike to a reweighed parent and to children that exceed an unweighed parent: without a
 * reweighing P1 is inferred as P0 − Σcᵢ, never below 0 (u₁ = 0), so children exceeding P0 give
 * L = P0 − Σcᵢ < 0, judged by the same rule (code `children-exceed-parent`, so the API can answer
 * that the mass is not there; beyond it, `mass-appeared`). Also rejected: a child ≤ 0, P0 ≤ 0, a
 * measured P1 < 0. Needs a recorded reason when L exceeds the loss tolerance or a child is below
 * the minimum weight (USP <41>). Non-integer masses and invalid uncertainties or options throw
 * MassInputError.
 */
export function splitBudget(input: SplitInput, options: SplitOptions): SplitBudget {
	const p0 = wholeUg(input.parentBefore.massUg, 'parentBefore');
	const u0 = uncertainty(input.parentBefore.u, 'parentBefore.u');
	const cs = input.children.map((c, i) => wholeUg(c.massUg, `children[${i}]`));
	const us = input.children.map((c, i) => uncertainty(c.u, `children[${i}].u`));
	const total = cs.reduce((a, c) => a + c, 0n);
	const after = input.parentAfter ?? null;
	const inferred = p0 - total;
	const p1 = after ? wholeUg(after.massUg, 'parentAfter') : inferred > 0n ? inferred : 0n;
	const u1 = after ? uncertainty(after.u, 'parentAfter.u') : 0;
	const loss = p0 - p1 - total;
	const uL = Math.sqrt(u0 * u0 + u1 * u1 + us.reduce((a, u) => a + u * u, 0));
	// without a reweighing the loss is not measured: 0, unless the children exceed the parent
	const lossU = after || loss !== 0n ? uL : 0;

	const tol = options.tolerance;
	// for integer L, L > f·P0 ⇔ L > ⌊f·P0⌋, so a fractional tolerance is floored exactly
	const toleranceUg =
		'ug' in tol
			? Number(wholeUg(tol.ug, 'tolerance.ug'))
			: scaleUg(Math.max(0, Number(p0)), fraction(tol.fraction, 'tolerance.fraction'), 'floor');
	if (toleranceUg < 0) throw new MassInputError('tolerance.ug', `tolerance must be ≥ 0 µg, got ${toleranceUg}`);
	const minimum = options.minimumWeightUg;
	if (minimum !== undefined) wholeUg(minimum, 'minimumWeightUg');

	const issues: SplitIssue[] = [];
	const reject = (code: SplitIssueCode, message: string, child?: number) =>
		issues.push({ code, severity: 'rejected', message, ...(child === undefined ? {} : { child }) });
	const mg = (x: bigint) => (Number.isSafeInteger(Number(x)) ? formatMg(Number(x)) : `${x} µg`);

	if (cs.length === 0) reject('no-children', 'a split needs at least one child');
	if (p0 <= 0n) reject('parent-not-positive', `parent mass before the split must be more than zero, got ${mg(p0)}`);
	cs.forEach((c, i) => {
		if (c <= 0n) reject('child-not-positive', `child ${i + 1} must weigh more than zero, got ${mg(c)}`, i);
	});
	if (after && p1 < 0n) reject('parent-after-negative', `parent mass after the split cannot be negative, got ${mg(p1)}`);
	else if (Number(loss) < -2 * uL) {
		const beyond = `more than 2·u_L = ${(2 * uL).toFixed(2)} µg: mass cannot appear`;
		if (total > p0) reject('children-exceed-parent', `children total ${mg(total)} exceeds the parent's ${mg(p0)} by ${mg(-loss)}, ${beyond}`);
		else reject('mass-appeared', `parent after plus children exceed the parent before by ${mg(-loss)}, ${beyond}; reweigh`);
	}

	const belowMinimum =
		minimum === undefined ? [] : cs.flatMap((c, i) => (c > 0n && c < BigInt(minimum) ? [i] : []));
	if (Number(loss) > toleranceUg) {
		issues.push({
			code: 'loss-above-tolerance',
			severity: 'needs-reason',
			message: `loss ${mg(loss)} is above the collection's tolerance of ${formatMg(toleranceUg)}: record a reason`
		});
	}
	for (const i of belowMinimum) {
		issues.push({
			code: 'below-minimum-weight',
			severity: 'needs-reason',
			child: i,
			message: `child ${i + 1} (${mg(cs[i])}) is below the minimum weight of ${formatMg(minimum!)}: record a reason`
		});
	}

	const verdict = issues.some((x) => x.severity === 'rejected')
		? 'rejected'
		: issues.length > 0
			? 'needs-reason'
			: 'ok';
	return {
		verdict,
		issues,
		reweighed: after !== null,
		childrenTotalUg: Number(total),
		parentAfterUg: Number(p1),
		lossUg: Number(loss),
		lossU,
		toleranceUg,
		belowMinimum
	};
}

/**
 * Pristine reserve: ⌈pristine × fraction⌉ µg, rounded up so the reserve is never understated.
 * Keeping most of a returned sample back for future study is common practice in sample
 * curation; there is no single published source, and the fraction is a collection setting.
 */
export function reserveUg(pristineUg: number, reserveFraction: number): number {
	const pristine = Number(wholeUg(pristineUg, 'pristineUg'));
	if (pristine < 0) throw new MassInputError('pristineUg', `pristine mass cannot be negative, got ${pristine} µg`);
	return scaleUg(pristine, fraction(reserveFraction, 'fraction'), 'ceil');
}

/**
 * Allocatable mass = pristine − reserve − earmarked − ⌈U⌉, floored at 0 (DESIGN §3.4; U is the
 * expanded uncertainty of the pristine mass, JCGM 100:2008, 6.2). The reserve is common curation
 * practice with no single published source.
 */
export function allocatableUg(a: {
	pristineUg: number;
	fraction: number;
	earmarkedUg: number;
	expandedUg: number;
}): number {
	const earmarked = Number(wholeUg(a.earmarkedUg, 'earmarkedUg'));
	if (earmarked < 0) throw new MassInputError('earmarkedUg', `earmarked mass cannot be negative, got ${earmarked} µg`);
	const margin = Math.ceil(uncertainty(a.expandedUg, 'expandedUg'));
	return Math.max(0, a.pristineUg - reserveUg(a.pristineUg, a.fraction) - earmarked - margin);
}
