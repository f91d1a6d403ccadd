/**
 * Allocation planner (DESIGN.md §3.11): ranked plans that fulfil an allocation request from the
 * material on offer.
 *
 * A plan is a list of steps: split item X into children of given masses (the pieces that go to the
 * lab; the parent keeps the rest), or hand item Y over whole. Every plan
 * - never takes more than the collection can give without cutting into its pristine reserve
 *   (`budgetUg`, the allocatable mass of DESIGN §3.4 as the server computes it);
 * - weighs every piece and every parent left behind on the chosen balance, whose USP <41> minimum
 *   weight m_min = 2000·max(s, 0.41·d) (DESIGN §3.2, mass.ts) each of them must reach;
 * - passes the split budget of DESIGN §3.3 (budget.ts) with the expected loss;
 * - uses only items that meet the collection's handling rules and the request's constraints
 *   (offer.ts, the same test as the offer's filters).
 *
 * Ranking follows an order of preferences the curator sets (lexicographic: the first criterion
 * decides, the next breaks ties). Each criterion is an integer, so plans compare exactly:
 * - `exposure` — Σ over pieces of 1000·(ambient-air minutes) + 10·(cleanroom-air minutes) + the
 *   minutes in gloveboxes and vacuum (rounded per class). Regolog's weighting, not a published one:
 *   ambient air is what a contamination reviewer asks about first.
 * - `depth` — Σ over pieces of the lineage depth the piece ends at (a split child sits one level
 *   below its parent; a whole item stays where it is).
 * - `splits` — the number of split operations.
 * - `fragmentation` — Σ of the masses of the items cut (µg): cutting a small piece keeps large ones large.
 * - `reserve` — the mass the plan takes from the collection (pieces + expected losses, µg); less
 *   taken is more left for later requests.
 *
 * One piece: every candidate's options (split, or whole) are enumerated and sorted. Several pieces
 * (possibly from several items): a mixed-integer programme solved with yalps, one criterion after
 * the other (each optimum is fixed as a constraint before the next is minimised), then further
 * plans by excluding the item choices already found.
 *
 * Candidate reduction (exact for one piece): an option dominated by others on every criterion can
 * only rank after them under any order, so options outside the first K Pareto layers (K = plans
 * asked for × pieces) never reach the top K and are dropped before solving. The same reduced input
 * goes to the browser, which re-plans with the curator's order by calling `planAllocation` again.
 *
 * Pure TypeScript: no database, framework or Node-only import.
 */
import { solve, type Model } from 'yalps';
import { splitBudget, type LossTolerance } from './budget';
import { formatMg } from './mass';
import { constraintMisses, describeConstraints, type OfferConstraints, type OfferExposure } from './offer';

export const CRITERIA = ['exposure', 'depth', 'splits', 'fragmentation', 'reserve'] as const;
export type Criterion = (typeof CRITERIA)[number];
export const CRITERION_LABELS: Record<Criterion, string> = {
	exposure: 'Least exposure',
	depth: 'Least added depth',
	splits: 'Fewest splits',
	fragmentation: 'Keep large pieces large',
	reserve: 'Most reserve kept'
};
export const DEFAULT_ORDER: readonly Criterion[] = CRITERIA;

/** An item on offer, as the planner needs it. */
export interface PlanCandidate {
	code: string;
	kind: 'specimen' | 'aliquot';
	massUg: number;
	/** standard uncertainty of the recorded mass, µg */
	uUg: number;
	depth: number;
	exposure: OfferExposure;
	blankCoverage: number | null;
}

/** A usable balance (active, calibrated) with its net uncertainty, USP <41> minimum weight and capacity. */
export interface PlanBalance {
	id: string;
	name: string;
	minimumWeightUg: number;
	netUUg: number;
	/** the maximum load, µg; null or absent when not recorded (taken to hold anything) */
	capacityUg?: number | null;
}

export interface PlanInput {
	/** total mass to hand to the lab (the grant, or the request while under review), µg */
	massUg: number;
	/** number of pieces; each piece gets ⌊massUg / pieces⌋ µg */
	pieces: number;
	constraints: OfferConstraints;
	/** when not empty, only these items may be used */
	itemCodes: readonly string[];
	items: readonly PlanCandidate[];
	balances: readonly PlanBalance[];
	/** what the collection can still give without cutting into its pristine reserve, µg */
	budgetUg: number;
	/** the collection's pristine reserve, µg (reported; never planned into) */
	reserveUg: number;
	/** expected loss of one split, µg (from the collection's recorded splits) */
	expectedLossUg: number;
	/** the collection's loss tolerance, for the split budget check */
	tolerance: LossTolerance;
	order?: readonly Criterion[];
	/** a whole item may be handed over for a piece when it holds at least this share of it; default 0.95 */
	minShare?: number;
	/** how many plans to return; default 5 (3 for several pieces) */
	maxPlans?: number;
}

export interface PlanStep {
	parentCode: string;
	action: 'split' | 'whole';
	/** the children of a split (each goes to the lab); empty when the item goes whole */
	childrenUg: number[];
	toLabUg: number;
	parentBeforeUg: number;
	/** what the parent keeps (0 when handed over whole) */
	parentAfterUg: number;
	balanceId: string | null;
	balanceName: string | null;
	minimumWeightUg: number | null;
	/** the balance the parent is reweighed on: the pieces' own, or one that holds the parent */
	parentBalanceId: string | null;
	parentBalanceName: string | null;
	parentMinimumWeightUg: number | null;
	expectedLossUg: number;
	/** standard uncertainty of the measured loss, u_L = √(u₀² + u₁² + Σuᵢ²) (GUM 5.1.2, budget.ts) */
	lossUUg: number;
	/** lineage levels the step adds (1 for a split, 0 whole) */
	depthAdded: number;
	/** depth of the material that goes to the lab */
	childDepth: number;
	/** exposure the lab's material inherits from this item */
	exposure: OfferExposure;
	blankCoverage: number | null;
}

export type Scores = Record<Criterion, number>;

export interface Plan {
	rank: number;
	steps: PlanStep[];
	toLabUg: number;
	/** mass taken from the collection: pieces and expected losses */
	takenUg: number;
	/** allocatable mass left after the plan; the reserve stays whole */
	allocatableAfterUg: number;
	reserveUg: number;
	scores: Scores;
	why: string[];
	gaveUp: string[];
}

export interface RuledOut {
	code: string;
	reason: string;
	/** how far the item is from qualifying (0 is just): smaller comes first */
	distance: number;
}

export interface PlanResult {
	plans: Plan[];
	ruledOut: RuledOut[];
	/** items not listed in ruledOut because the list was cut */
	ruledOutMore: number;
	pieceUg: number;
	balance: PlanBalance | null;
	method: 'enumeration' | 'mixed-integer programme';
	/** candidates that qualify, and how many were kept after the Pareto reduction */
	qualifying: number;
	kept: number;
	/** the items kept after the reduction: planning on these alone gives the same top plans */
	keptCodes: string[];
	/** why there is no plan at all, when that is a matter of the request rather than of items */
	blocked: string[];
	order: Criterion[];
}

interface Option {
	item: PlanCandidate;
	index: number;
	mode: 'split' | 'whole';
	/** per piece (split: per child; whole: the item itself) */
	e: number;
	childDepth: number;
	/** for split: most pieces the item can give */
	cap: number;
	/** for split: the balance the pieces are weighed on, and the one the parent left behind is reweighed on */
	balance: PlanBalance | null;
	parentBalance: PlanBalance | null;
	vector: number[];
}

const RULED_OUT_SHOWN = 25;

/** Regolog's exposure score of one piece; see the module comment. */
export function exposureScore(e: OfferExposure): number {
	const t = e.total;
	return 1000 * Math.round(t.ambient_air) + 10 * Math.round(t.cleanroom_air) + Math.round(t.nitrogen_glovebox) + Math.round(t.argon_glovebox) + Math.round(t.vacuum);
}

/** Lexicographic comparison of two score sets in the given order (negative: a ranks first). */
export function compareScores(a: Scores, b: Scores, order: readonly Criterion[]): number {
	for (const c of order) if (a[c] !== b[c]) return a[c] - b[c];
	return 0;
}

/**
 * The balance for pieces of `pieceUg`: usable, m_min ≤ the piece, holding `heaviestUg` (the
 * heaviest load put on it, by default the piece) within its capacity, smallest net uncertainty.
 */
export function chooseBalance(balances: readonly PlanBalance[], pieceUg: number, heaviestUg = pieceUg): PlanBalance | null {
	const fit = balances.filter((b) => b.minimumWeightUg <= pieceUg && (b.capacityUg == null || b.capacityUg >= heaviestUg));
	fit.sort((x, y) => x.netUUg - y.netUUg || x.minimumWeightUg - y.minimumWeightUg || (x.name < y.name ? -1 : 1));
	return fit[0] ?? null;
}

/**
 * The balance the parent left behind (`afterUg`) is reweighed on: the pieces' balance when it holds
 * it, else the finest usable balance that does (smallest net uncertainty); null when none holds it.
 */
export function parentBalanceFor(balances: readonly PlanBalance[], pieces: PlanBalance, afterUg: number): PlanBalance | null {
	if (pieces.capacityUg == null || pieces.capacityUg >= afterUg) return pieces;
	const fit = balances.filter((b) => b.capacityUg == null || b.capacityUg >= afterUg);
	fit.sort((x, y) => x.netUUg - y.netUUg || x.minimumWeightUg - y.minimumWeightUg || (x.name < y.name ? -1 : 1));
	return fit[0] ?? null;
}

function normalOrder(order: readonly Criterion[] | undefined): Criterion[] {
	const seen = new Set<Criterion>();
	for (const c of order ?? []) if ((CRITERIA as readonly string[]).includes(c)) seen.add(c);
	for (const c of CRITERIA) seen.add(c);
	return [...seen];
}

function dominates(a: number[], b: number[]): boolean {
	let strict = false;
	for (let i = 0; i < a.length; i++) {
		if (a[i] > b[i]) return false;
		if (a[i] < b[i]) strict = true;
	}
	return strict;
}

/** The first `layers` Pareto layers of the options (block-nested-loop skyline, peeled). */
function paretoLayers(options: Option[], layers: number): Option[] {
	// options with the same criteria are interchangeable: only the first `layers` of each (by code,
	// the planner's own tie-break) can reach the top, so the rest never enter the fronts
	const seen = new Map<string, number>();
	const distinct: Option[] = [];
	for (const o of [...options].sort((a, b) => (a.item.code < b.item.code ? -1 : a.item.code > b.item.code ? 1 : 0))) {
		const key = o.vector.join(',');
		const n = seen.get(key) ?? 0;
		if (n >= layers) continue;
		seen.set(key, n + 1);
		distinct.push(o);
	}
	let rest = distinct.sort((x, y) => x.vector[0] - y.vector[0] || x.vector[1] - y.vector[1] || x.vector[2] - y.vector[2]);
	const kept: Option[] = [];
	for (let l = 0; l < layers && rest.length; l++) {
		const front: Option[] = [];
		const next: Option[] = [];
		for (const o of rest) {
			// sorted by the first coordinates, so a later option never dominates an earlier one on those: one pass suffices
			if (front.some((f) => dominates(f.vector, o.vector))) next.push(o);
			else front.push(o);
		}
		kept.push(...front);
		rest = next;
	}
	return kept;
}

const min1 = (x: number) => `${Math.round(x * 10) / 10} min`;

/**
 * Plans for one request, best first in the curator's order, with the reasons for their ranks and
 * what each gave up, and the items that cannot serve it, closest first.
 */
export function planAllocation(input: PlanInput): PlanResult {
	const order = normalOrder(input.order);
	const pieces = Math.max(1, Math.floor(input.pieces));
	const pieceUg = Math.floor(input.massUg / pieces);
	const multi = pieces > 1;
	const maxPlans = input.maxPlans ?? (multi ? 3 : 5);
	const minShare = input.minShare ?? 0.95;
	const loss = Math.max(0, Math.round(input.expectedLossUg));
	const balance = chooseBalance(input.balances, pieceUg);
	const blocked: string[] = [];
	const result = (plans: Plan[], ruled: RuledOut[], qualifying: number, kept: string[]): PlanResult => {
		ruled.sort((a, b) => a.distance - b.distance || (a.code < b.code ? -1 : 1));
		return {
			plans, ruledOut: ruled.slice(0, RULED_OUT_SHOWN), ruledOutMore: Math.max(0, ruled.length - RULED_OUT_SHOWN), pieceUg, balance,
			method: multi ? 'mixed-integer programme' : 'enumeration', qualifying, kept: kept.length, keptCodes: kept, blocked, order
		};
	};

	if (pieceUg <= 0) {
		blocked.push(`${formatMg(input.massUg)} cannot be cut into ${pieces} pieces of whole micrograms.`);
		return result([], [], 0, []);
	}
	const finest = [...input.balances].sort((a, b) => a.minimumWeightUg - b.minimumWeightUg)[0];
	if (!balance) {
		blocked.push(
			finest
				? `A piece of ${formatMg(pieceUg)} is below the minimum weight of every usable balance (USP <41>; the smallest is ${formatMg(finest.minimumWeightUg)} on ${finest.name}): ask for larger pieces or fewer of them.`
				: 'No balance is usable (active and within its calibration date), so no piece can be weighed.'
		);
	}
	const takeNeeded = pieces * pieceUg;
	if (input.budgetUg < takeNeeded) {
		blocked.push(`The collection can give ${formatMg(Math.max(0, input.budgetUg))} without cutting into its pristine reserve of ${formatMg(input.reserveUg)}; ${formatMg(takeNeeded)} is asked for.`);
	}

	const only = new Set(input.itemCodes);
	const ruled: RuledOut[] = [];
	const options: Option[] = [];
	const wholeLow = Math.ceil(pieceUg * minShare);
	let qualifying = 0;
	input.items.forEach((item, index) => {
		if (only.size && !only.has(item.code)) return;
		const misses = constraintMisses(item, input.constraints);
		if (misses.length) {
			misses.sort((a, b) => a.distance - b.distance);
			ruled.push({ code: item.code, reason: misses.map((m) => m.reason).join('; '), distance: 1 + misses.length + misses[0].distance });
			return;
		}
		if (!balance) {
			ruled.push({ code: item.code, reason: `${item.code} qualifies, but no balance can weigh a ${formatMg(pieceUg)} piece`, distance: finest ? (finest.minimumWeightUg - pieceUg) / finest.minimumWeightUg : 1 });
			return;
		}
		const e = exposureScore(item.exposure);
		// the pieces go on `balance`; the parent left behind (heaviest with one piece cut) is reweighed
		// on it too when it holds it, else on the finest balance that does
		const own = parentBalanceFor(input.balances, balance, item.massUg - pieceUg - loss);
		const mMin = (own ?? balance).minimumWeightUg;
		const cap = own ? Math.max(0, Math.floor((item.massUg - loss - mMin) / pieceUg)) : 0;
		const splitOk = cap >= 1 && pieceUg + loss <= input.budgetUg;
		const wholeOk = item.massUg <= pieceUg && item.massUg >= wholeLow && item.massUg >= balance.minimumWeightUg && item.massUg <= input.budgetUg;
		if (!splitOk && !wholeOk && !own) {
			const roomiest = [...input.balances].sort((a, b) => (b.capacityUg ?? Infinity) - (a.capacityUg ?? Infinity))[0];
			ruled.push({
				code: item.code,
				reason: `${item.code} holds ${formatMg(item.massUg)}; no usable balance can reweigh the ${formatMg(item.massUg - pieceUg - loss)} it keeps after a ${formatMg(pieceUg)} piece (the largest, ${roomiest.name}, holds ${formatMg(roomiest.capacityUg!)})`,
				distance: roomiest.capacityUg ? (item.massUg - pieceUg - loss - roomiest.capacityUg) / item.massUg : 1
			});
			return;
		}
		if (!splitOk && !wholeOk) {
			const need = pieceUg + loss + mMin;
			const reason = item.massUg > pieceUg && item.massUg < need
				? `${item.code} holds ${formatMg(item.massUg)}; cutting a ${formatMg(pieceUg)} piece needs ${formatMg(need)}, because the parent must keep at least the ${formatMg(mMin)} minimum weight of ${(own ?? balance).name} and the split loses about ${formatMg(loss)}`
				: item.massUg < wholeLow
					? `${item.code} holds ${formatMg(item.massUg)}, less than a ${formatMg(pieceUg)} piece (a whole item must hold at least ${Math.round(minShare * 100)} % of it)`
					: `${item.code} would take more than the ${formatMg(Math.max(0, input.budgetUg))} the collection can give without cutting into its reserve`;
			ruled.push({ code: item.code, reason, distance: Math.abs(need - item.massUg) / need });
			return;
		}
		qualifying++;
		if (splitOk) {
			const v = [e, item.depth + 1, 1, item.massUg, pieceUg + loss, -cap];
			options.push({ item, index, mode: 'split', e, childDepth: item.depth + 1, cap, balance, parentBalance: own, vector: v });
		}
		if (wholeOk) {
			const v = [e, item.depth, 0, 0, item.massUg, -1];
			options.push({ item, index, mode: 'whole', e, childDepth: item.depth, cap: 1, balance: null, parentBalance: null, vector: v });
		}
	});
	if (blocked.length) return result([], ruled, qualifying, []);

	const kept = paretoLayers(options, maxPlans * pieces);
	const keptItems = new Set(kept.map((o) => o.item.code));
	const ctx: StepContext = { loss, tolerance: input.tolerance };
	let plans: Omit<Plan, 'rank' | 'why' | 'gaveUp'>[];
	if (!multi) {
		plans = kept
			.map((o) => assemble([{ option: o, count: 1 }], ctx, pieceUg, input))
			.sort((a, b) => compareScores(a.scores, b.scores, order) || (a.steps[0].parentCode < b.steps[0].parentCode ? -1 : 1))
			.slice(0, maxPlans);
	} else {
		const usable = options.filter((o) => keptItems.has(o.item.code));
		plans = solveMip(usable, pieces, pieceUg, order, maxPlans, ctx, input);
		if (!plans.length) {
			const capacity = usable.reduce((s, o) => s + (o.mode === 'split' ? o.cap : 0), 0) + usable.filter((o) => o.mode === 'whole').length;
			blocked.push(
				usable.length
					? `The qualifying items cannot give ${pieces} pieces of ${formatMg(pieceUg)} together within what the collection can give (they could give at most ${capacity} piece${capacity === 1 ? '' : 's'}).`
					: `No item qualifies for a ${formatMg(pieceUg)} piece.`
			);
		}
	}
	if (!plans.length && !blocked.length) blocked.push(`No item on offer qualifies for a ${formatMg(pieceUg)} piece${describeConstraints(input.constraints).length ? ` under the request's constraints (${describeConstraints(input.constraints).join(', ')})` : ''}.`);
	return result(explain(plans, order), ruled, qualifying, [...keptItems]);
}

interface StepContext {
	loss: number;
	tolerance: LossTolerance;
}

function step(o: Option, count: number, ctx: StepContext, pieceUg: number): PlanStep {
	const it = o.item;
	if (o.mode === 'whole') {
		return {
			parentCode: it.code, action: 'whole', childrenUg: [], toLabUg: it.massUg, parentBeforeUg: it.massUg, parentAfterUg: 0,
			balanceId: null, balanceName: null, minimumWeightUg: null, parentBalanceId: null, parentBalanceName: null, parentMinimumWeightUg: null, expectedLossUg: 0, lossUUg: 0, depthAdded: 0, childDepth: it.depth,
			exposure: it.exposure, blankCoverage: it.blankCoverage
		};
	}
	const childrenUg = Array.from({ length: count }, () => pieceUg);
	const after = it.massUg - count * pieceUg - ctx.loss;
	const bal = o.balance!;
	const pb = o.parentBalance!;
	const u = bal.netUUg;
	// the split budget of DESIGN §3.3, as the split form and the server will check it
	const b = splitBudget(
		{ parentBefore: { massUg: it.massUg, u: it.uUg }, children: childrenUg.map((m) => ({ massUg: m, u })), parentAfter: { massUg: after, u: pb.netUUg } },
		{ tolerance: ctx.tolerance, minimumWeightUg: bal.minimumWeightUg }
	);
	if (b.verdict === 'rejected' || b.belowMinimum.length || after < pb.minimumWeightUg || (bal.capacityUg != null && pieceUg > bal.capacityUg) || (pb.capacityUg != null && after > pb.capacityUg)) {
		throw new Error(`planner: a split of ${it.code} into ${count} × ${pieceUg} µg does not pass the split budget`);
	}
	return {
		parentCode: it.code, action: 'split', childrenUg, toLabUg: count * pieceUg, parentBeforeUg: it.massUg, parentAfterUg: after,
		balanceId: bal.id, balanceName: bal.name, minimumWeightUg: bal.minimumWeightUg,
		parentBalanceId: pb.id, parentBalanceName: pb.name, parentMinimumWeightUg: pb.minimumWeightUg, expectedLossUg: ctx.loss, lossUUg: b.lossU,
		depthAdded: 1, childDepth: it.depth + 1, exposure: it.exposure, blankCoverage: it.blankCoverage
	};
}

function assemble(parts: { option: Option; count: number }[], ctx: StepContext, pieceUg: number, input: PlanInput): Omit<Plan, 'rank' | 'why' | 'gaveUp'> {
	const steps = parts
		.map((p) => step(p.option, p.count, ctx, pieceUg))
		.sort((a, b) => (a.parentCode < b.parentCode ? -1 : 1));
	const scores: Scores = { exposure: 0, depth: 0, splits: 0, fragmentation: 0, reserve: 0 };
	for (const p of parts) {
		const n = p.option.mode === 'split' ? p.count : 1;
		scores.exposure += p.option.e * n;
		scores.depth += p.option.childDepth * n;
		if (p.option.mode === 'split') {
			scores.splits += 1;
			scores.fragmentation += p.option.item.massUg;
			scores.reserve += p.count * pieceUg + ctx.loss;
		} else scores.reserve += p.option.item.massUg;
	}
	const toLabUg = steps.reduce((s, x) => s + x.toLabUg, 0);
	return { steps, toLabUg, takenUg: scores.reserve, allocatableAfterUg: input.budgetUg - scores.reserve, reserveUg: input.reserveUg, scores };
}

const KEY: Record<Criterion, string> = { exposure: 'cE', depth: 'cD', splits: 'cS', fragmentation: 'cF', reserve: 'cR' };
// masses enter the programme in mg, so coefficients stay within the solver's precision
const MG = 1 / 1000;

/** Several pieces: the mixed-integer programme, one criterion at a time, then more plans by exclusion. */
function solveMip(options: Option[], pieces: number, pieceUg: number, order: Criterion[], maxPlans: number, ctx: StepContext, input: PlanInput) {
	const variables = new Map<string, Record<string, number>>();
	const constraints = new Map<string, { min?: number; max?: number; equal?: number }>();
	const integers: string[] = [];
	const binaries: string[] = [];
	constraints.set('pieces', { equal: pieces });
	constraints.set('budget', { max: input.budgetUg * MG });
	const byItem = new Map<number, Option[]>();
	for (const o of options) byItem.set(o.index, [...(byItem.get(o.index) ?? []), o]);
	for (const [i, os] of byItem) {
		if (os.length > 1) constraints.set(`one${i}`, { max: 1 });
		for (const o of os) {
			if (o.mode === 'split') {
				const cap = Math.min(o.cap, pieces);
				variables.set(`n${i}`, { pieces: 1, [`link${i}`]: 1, [`low${i}`]: 1, cE: o.e, cD: o.childDepth, cR: pieceUg * MG });
				variables.set(`s${i}`, { [`link${i}`]: -cap, [`low${i}`]: -1, [`one${i}`]: 1, cS: 1, cF: o.item.massUg * MG, cR: ctx.loss * MG, budget: ctx.loss * MG });
				variables.get(`n${i}`)!.budget = pieceUg * MG;
				constraints.set(`link${i}`, { max: 0 });
				constraints.set(`low${i}`, { min: 0 });
				integers.push(`n${i}`);
				binaries.push(`s${i}`);
			} else {
				variables.set(`h${i}`, { pieces: 1, [`one${i}`]: 1, cE: o.e, cD: o.childDepth, cR: o.item.massUg * MG, budget: o.item.massUg * MG });
				binaries.push(`h${i}`);
			}
		}
	}
	const found: Omit<Plan, 'rank' | 'why' | 'gaveUp'>[] = [];
	const cuts: string[][] = [];
	for (let p = 0; p < maxPlans; p++) {
		const fixed: Partial<Record<Criterion, number>> = {};
		let last: Map<string, number> | null = null;
		for (const c of order) {
			const cons = new Map(constraints);
			for (const [k, v] of Object.entries(fixed)) cons.set(KEY[k as Criterion], { max: v + 1e-4 });
			cuts.forEach((cut, j) => cons.set(`cut${j}`, { max: cut.length - 1 }));
			const vars = new Map<string, Record<string, number>>();
			for (const [k, v] of variables) {
				const coeffs = { ...v };
				cuts.forEach((cut, j) => {
					if (cut.includes(k)) coeffs[`cut${j}`] = 1;
				});
				vars.set(k, coeffs);
			}
			const model: Model = { direction: 'minimize', objective: KEY[c], constraints: cons, variables: vars, integers, binaries };
			const sol = solve(model, { maxIterations: 20000, timeout: 2000 });
			if (sol.status !== 'optimal' && !(sol.status === 'timedout' && Number.isFinite(sol.result))) {
				last = null;
				break;
			}
			last = new Map(sol.variables.map(([k, v]) => [k, Math.round(v)]));
			const plan = fromSolution(last, byItem, ctx, pieceUg, input);
			fixed[c] = scaled(plan.scores[c], c);
		}
		if (!last) break;
		const plan = fromSolution(last, byItem, ctx, pieceUg, input);
		found.push(plan);
		cuts.push([...last.entries()].filter(([k, v]) => v > 0 && (k.startsWith('s') || k.startsWith('h'))).map(([k]) => k));
	}
	return found.sort((a, b) => compareScores(a.scores, b.scores, order));
}

function scaled(v: number, c: Criterion): number {
	return c === 'fragmentation' || c === 'reserve' ? v * MG : v;
}

function fromSolution(values: Map<string, number>, byItem: Map<number, Option[]>, ctx: StepContext, pieceUg: number, input: PlanInput) {
	const parts: { option: Option; count: number }[] = [];
	for (const [i, os] of byItem) {
		for (const o of os) {
			if (o.mode === 'split' && (values.get(`s${i}`) ?? 0) > 0 && (values.get(`n${i}`) ?? 0) > 0) parts.push({ option: o, count: values.get(`n${i}`)! });
			if (o.mode === 'whole' && (values.get(`h${i}`) ?? 0) > 0) parts.push({ option: o, count: 1 });
		}
	}
	return assemble(parts, ctx, pieceUg, input);
}

function describe(c: Criterion, p: Omit<Plan, 'rank' | 'why' | 'gaveUp'>): string {
	switch (c) {
		case 'exposure': {
			const amb = p.steps.reduce((s, x) => s + x.exposure.total.ambient_air * (x.action === 'split' ? x.childrenUg.length : 1), 0);
			const handled = p.steps.reduce((s, x) => s + Object.values(x.exposure.total).reduce((a, m) => a + m, 0) * (x.action === 'split' ? x.childrenUg.length : 1), 0);
			return amb > 0 ? `${min1(amb)} of ambient air and ${min1(handled)} handled in all, inherited by the pieces` : handled > 0 ? `no ambient air; ${min1(handled)} handled in gloveboxes, cleanroom or vacuum` : 'no handling session on record';
		}
		case 'depth':
			return `pieces at lineage depth ${p.steps.flatMap((s) => (s.action === 'split' ? s.childrenUg.map(() => s.childDepth) : [s.childDepth])).join(', ')}`;
		case 'splits':
			return p.scores.splits === 0 ? 'no split: handed over whole' : `${p.scores.splits} split${p.scores.splits > 1 ? 's' : ''}`;
		case 'fragmentation':
			return p.scores.fragmentation === 0 ? 'cuts no piece' : `cuts ${p.steps.filter((s) => s.action === 'split').map((s) => `${s.parentCode} (${formatMg(s.parentBeforeUg)})`).join(' and ')}`;
		case 'reserve':
			return `takes ${formatMg(p.takenUg)}, leaving ${formatMg(p.allocatableAfterUg)} allocatable`;
	}
}

function ordinal(n: number): string {
	return n === 1 ? '1st' : n === 2 ? '2nd' : n === 3 ? '3rd' : `${n}th`;
}

/** Ranks, reasons in plain words, and what each plan gave up against the best found on each preference. */
function explain(plans: Omit<Plan, 'rank' | 'why' | 'gaveUp'>[], order: Criterion[]): Plan[] {
	const best = Object.fromEntries(CRITERIA.map((c) => [c, Math.min(...plans.map((p) => p.scores[c]))])) as Scores;
	return plans.map((p, i) => {
		const why: string[] = [];
		const rank = i + 1;
		const prev = plans[i - 1];
		const next = plans[i + 1];
		if (!prev) why.push(`Ranked ${ordinal(rank)}: best on ${CRITERION_LABELS[order[0]].toLowerCase()} — ${describe(order[0], p)}.`);
		else {
			const c = order.find((k) => prev.scores[k] !== p.scores[k]);
			why.push(c ? `Ranked ${ordinal(rank)}: behind plan ${rank - 1} on ${CRITERION_LABELS[c].toLowerCase()} — ${describe(c, p)}, against ${describe(c, prev)}.` : `Ranked ${ordinal(rank)}: level with plan ${rank - 1} on every preference.`);
		}
		if (next) {
			const c = order.find((k) => next.scores[k] !== p.scores[k]);
			if (c && c !== order[0]) why.push(`Ahead of plan ${rank + 1} on ${CRITERION_LABELS[c].toLowerCase()} (earlier preferences tie).`);
		}
		why.push(`${p.steps.length} step${p.steps.length > 1 ? 's' : ''}; ${describe('splits', p)}; ${describe('reserve', p)}.`);
		const gaveUp = order
			.filter((c) => p.scores[c] > best[c])
			.map((c) => {
				const j = plans.findIndex((q) => q.scores[c] === best[c]);
				return `${CRITERION_LABELS[c]}: ${describe(c, p)}, where plan ${j + 1} ${describe(c, plans[j])}.`.replace(/where plan (\d+) (cuts|takes|pieces|no|material|\d)/, 'where plan $1: $2');
			});
		return { ...p, rank, why, gaveUp: gaveUp.length ? gaveUp : ['Nothing: no plan found does better on any preference.'] };
	});
}
