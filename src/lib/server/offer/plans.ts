import { z } from 'zod';
import { QueryTypes, type Sequelize } from 'sequelize';
import { CRITERIA, planAllocation, type Criterion, type PlanInput } from '../../domain/planner';
import { ApiProblem } from '../api';
import type { SessionUser } from '../auth/types';
import { grantableUg } from '../custody/request-budget';
import { loadRequest } from '../custody/request-queries';
import { REQUEST_STATE_LABELS, requestNumber } from '../custody/common';
import { listBalances } from '../registry/balances';
import { toleranceOf } from '../registry/split';
import { offeredItems, offerSnapshot } from './offer';

export const plansQuery = z.strictObject({
	order: z
		.string()
		.trim()
		.transform((s) => s.split(',').map((x) => x.trim()).filter(Boolean))
		.refine((list) => list.every((c) => (CRITERIA as readonly string[]).includes(c)), `must list preferences from ${CRITERIA.join(', ')}, comma-separated`)
		.refine((list) => new Set(list).size === list.length, 'names a preference twice')
		.optional()
});

const PLANNABLE = ['submitted', 'in_review', 'granted'];

/**
 * Everything the planner needs for one request, read from the database: the request and what is
 * already set aside for it, the items on offer in its collection (offer.ts, with exposure and
 * coverage from domain/exposure.ts), the usable balances, the collection's loss tolerance and its
 * budget (the grantable mass of custody/request-budget.ts: DESIGN §3.4 less what other grants have
 * promised; for a granted request its own promise is added back, since the plan spends it).
 */
export async function planInput(sq: Sequelize, user: SessionUser, id: string, order?: Criterion[]) {
	const r = await loadRequest(sq, user, id);
	if (!PLANNABLE.includes(r.state)) {
		throw new ApiProblem(409, 'conflict', `${requestNumber(r.number)} is ${REQUEST_STATE_LABELS[r.state].toLowerCase()}; plans are made for submitted, in-review and granted requests.`);
	}
	const [col] = await sq.query<{ loss_tolerance_ug: number | null; loss_tolerance_fraction: string | null; expected_loss_ug: number }>(
		`SELECT c.loss_tolerance_ug, c.loss_tolerance_fraction,
		        (SELECT coalesce(round(avg(greatest(sp.loss_ug, 0))), 0)::bigint FROM splits sp JOIN items p ON p.id = sp.parent_id
		         WHERE p.collection_id = c.id AND sp.reweighed) AS expected_loss_ug
		 FROM collections c WHERE c.id = :id`,
		{ type: QueryTypes.SELECT, replacements: { id: r.collection_id } }
	);
	const set = await sq.query<{ n: number; total: number }>('SELECT count(*)::int AS n, coalesce(sum(mass_ug), 0)::bigint AS total FROM allocation_items WHERE request_id = :id', {
		type: QueryTypes.SELECT, replacements: { id: r.id }
	});
	const setAside = Number(set[0].total);
	const budget = await sq.transaction((t) => grantableUg(sq, t, r.collection_id));
	const granted = r.state === 'granted';
	const ownOutstanding = granted ? Math.max(0, Number(r.granted_ug) - setAside) : 0;
	const summaries = (await offeredItems(sq, r.prefix)).map((x) => ({
		code: x.code, kind: x.kind, massUg: x.massUg, uUg: x.uUg, depth: x.depth, exposure: x.exposure, blankCoverage: x.blankCoverage
	}));
	const balances = (await listBalances(sq)).filter((b) => b.usable).map((b) => ({ id: b.id, name: b.name, minimumWeightUg: b.minimumWeightUg, netUUg: b.netUUg, capacityUg: b.capacityUg }));
	const massUg = granted ? Math.max(0, Number(r.granted_ug) - setAside) : Number(r.mass_ug);
	const summary = (await offerSnapshot(sq)).collections.find((c) => c.prefix === r.prefix)!;
	const input: PlanInput = {
		massUg,
		pieces: Math.max(1, r.pieces - (granted ? set[0].n : 0)),
		constraints: r.constraints ?? {},
		itemCodes: r.item_codes ?? [],
		items: summaries,
		balances,
		budgetUg: budget.grantableUg + ownOutstanding,
		reserveUg: summary.reserveUg,
		expectedLossUg: Number(col.expected_loss_ug),
		tolerance: toleranceOf(col),
		...(order?.length ? { order } : {})
	};
	return { request: r, input, setAsideUg: setAside };
}

/**
 * GET /api/requests/{id}/plans: ranked plans, the items ruled out (closest first) and the reduced
 * planner input that lets the page re-plan in the browser with another order of preferences.
 * Nothing is written.
 */
export async function requestPlans(sq: Sequelize, user: SessionUser, id: string, order?: Criterion[]) {
	const { request: r, input } = await planInput(sq, user, id, order);
	const result = planAllocation(input);
	const keep = new Set(result.keptCodes);
	return {
		request: { id: r.id, number: requestNumber(r.number), state: r.state, collection: r.prefix, massUg: input.massUg, pieces: input.pieces, constraints: input.constraints, itemCodes: input.itemCodes },
		...result,
		// the Pareto-reduced input: planAllocation on it gives the same top plans for any order
		input: { ...input, items: input.items.filter((x) => keep.has(x.code)) }
	};
}
