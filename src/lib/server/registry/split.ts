import { randomUUID } from 'node:crypto';
import { z } from 'zod';
import type { Sequelize } from 'sequelize';
import { splitBudget, type LossTolerance, type SplitBudget } from '../../domain/budget';
import { formatMg } from '../../domain/mass';
import { ApiProblem } from '../api';
import { preparedQuery } from '../prepared';
import { trailRowOf, trailStatement } from '../trail';
import { checkSplitSession } from '../handling/split-sessions';
import { balanceForWeighing, checkCapacity, type BalanceView } from './balances';
import { findItem, micrograms, shortText, trailActor, type ItemRow, type Who } from './common';

export const MAX_CHILDREN = 200;

export const splitInput = z.strictObject({
	children: z
		.array(
			z.strictObject({
				massUg: micrograms(),
				tareUg: micrograms({ allowZero: true }).optional(),
				description: shortText(2000).optional(),
				container: shortText(200).optional(),
				storagePlace: shortText(200).optional()
			}),
			{ error: 'must be a list of children, each { "massUg": whole µg }' }
		)
		.min(1, 'a split needs at least one child')
		.max(MAX_CHILDREN, `at most ${MAX_CHILDREN} children in one split`),
	parentAfterUg: micrograms({ allowZero: true }).optional(),
	balanceId: z.string({ error: 'must be a balance id' }).optional(),
	// the balance the parent is reweighed on, when it is another than the children's (a parent too
	// heavy for the balance that weighs small children); by default the children's
	parentBalanceId: z.string({ error: 'must be a balance id' }).optional(),
	reason: shortText(2000).optional(),
	// the handling session the split happened in; without one the split is flagged until one is attached
	handlingSessionId: z.string({ error: 'must be a handling session id' }).optional()
});
export type SplitRequest = z.infer<typeof splitInput>;

export interface CollectionRules {
	id: string;
	prefix: string;
	loss_tolerance_ug: number | null;
	loss_tolerance_fraction: string | null;
}

export function toleranceOf(c: Pick<CollectionRules, 'loss_tolerance_ug' | 'loss_tolerance_fraction'>): LossTolerance {
	return c.loss_tolerance_ug !== null ? { ug: Number(c.loss_tolerance_ug) } : { fraction: Number(c.loss_tolerance_fraction) };
}

/** Sends the budget's refusal as the API's answer: 409 when the mass is not there, 422 otherwise. */
function refuse(budget: SplitBudget, parent: ItemRow, reason: string | undefined): void {
	const issues = budget.issues.map((i) => ({ code: i.code, severity: i.severity, message: i.message, ...(i.child === undefined ? {} : { child: i.child }) }));
	const extra = { availableUg: parent.mass_ug, requestedUg: budget.childrenTotalUg, issues };
	const fields: Record<string, string> = {};
	const fieldOf = (i: SplitBudget['issues'][number]) =>
		i.child !== undefined ? `children.${i.child}.massUg` : ['mass-appeared', 'parent-after-negative'].includes(i.code) ? 'parentAfterUg' : i.code === 'loss-above-tolerance' ? 'reason' : 'children';
	for (const i of budget.issues) fields[fieldOf(i)] ??= i.message;
	if (budget.issues.some((i) => i.code === 'children-exceed-parent' || i.code === 'parent-not-positive')) {
		throw new ApiProblem(
			409,
			'budget_exceeded',
			`${parent.code} holds ${formatMg(parent.mass_ug)} (${parent.mass_ug} µg); the children ask for ${formatMg(budget.childrenTotalUg)} (${budget.childrenTotalUg} µg).`,
			fields,
			extra
		);
	}
	const rejected = budget.issues.find((i) => i.severity === 'rejected');
	if (rejected) throw new ApiProblem(422, rejected.code === 'mass-appeared' ? 'mass_appeared' : 'invalid_input', rejected.message, fields, extra);
	if (budget.verdict === 'needs-reason' && !reason) {
		throw new ApiProblem(422, 'reason_required', `This split needs a recorded reason: ${budget.issues.map((i) => i.message).join('; ')}.`, { reason: 'is required for this split', ...fields }, extra);
	}
}

/**
 * One split, as one transaction: locks the parent row (SELECT … FOR UPDATE), recomputes the
 * budget with the domain module (DESIGN §3.3), creates the children with fresh codes, records
 * their weighings, writes the ledger for parent, children and loss, updates the parent, and
 * appends the trail event. Two splits of one parent queue on the lock and never spend the same µg.
 */
export async function splitItem(sq: Sequelize, who: Who, parentCode: string, input: SplitRequest) {
	if (input.parentBalanceId !== undefined && input.parentAfterUg === undefined) {
		throw new ApiProblem(422, 'invalid_input', 'parentBalanceId: names the balance the parent was reweighed on; give parentAfterUg with it.', { parentAfterUg: 'is required with parentBalanceId' });
	}
	if (input.parentAfterUg !== undefined && input.balanceId === undefined && input.parentBalanceId === undefined) {
		throw new ApiProblem(422, 'invalid_input', 'parentAfterUg: a reweighed parent needs the balanceId it was weighed on.', { balanceId: 'is required with parentAfterUg' });
	}
	if (input.balanceId === undefined && input.children.some((c) => c.tareUg !== undefined)) {
		throw new ApiProblem(422, 'invalid_input', 'children: a tare needs the balanceId of the weighing.', { balanceId: 'is required with tareUg' });
	}
	return sq.transaction(async (t) => {
		const parent = await findItem(sq, who, parentCode, { t, lock: true });
		if (parent.state !== 'stored' || parent.holder_lab_id !== null) {
			throw new ApiProblem(409, 'not_splittable', `${parent.code} is ${parent.state.replace('_', ' ')}${parent.holder_lab_id ? ` and held by ${parent.holder_name}` : ''}; only material stored at the facility can be split.`, undefined, {
				availableUg: 0
			});
		}
		const balance: BalanceView | null = input.balanceId === undefined ? null : await balanceForWeighing(sq, t, input.balanceId);
		// the parent's reweighing: on its own balance when one is named, else on the children's
		const parentBalance: BalanceView | null =
			input.parentAfterUg === undefined ? null : input.parentBalanceId === undefined || input.parentBalanceId === input.balanceId ? balance : await balanceForWeighing(sq, t, input.parentBalanceId, 'parentBalanceId');
		if (balance) checkCapacity(balance, input.children.map((c, i) => ({ field: `children.${i}.massUg`, ug: c.massUg + (c.tareUg ?? 0) })));
		if (parentBalance) checkCapacity(parentBalance, [{ field: 'parentAfterUg', ug: input.parentAfterUg! }]);
		const u0 = parent.mass_u_ug ?? 0;
		const uChild = balance ? balance.netUUg : 0;
		const budget = splitBudget(
			{
				parentBefore: { massUg: parent.mass_ug, u: u0 },
				children: input.children.map((c) => ({ massUg: c.massUg, u: uChild })),
				parentAfter: input.parentAfterUg === undefined ? null : { massUg: input.parentAfterUg, u: parentBalance!.netUUg }
			},
			{ tolerance: toleranceOf(parent), ...(balance ? { minimumWeightUg: balance.minimumWeightUg } : {}) }
		);
		const reason = input.reason || undefined;
		refuse(budget, parent, reason);
		if (input.handlingSessionId !== undefined) await checkSplitSession(sq, t, input.handlingSessionId, parent.id, parent.code);

		// uncertainty of the parent's recorded mass after: measured, or propagated (GUM 5.1.2)
		const uAfter = budget.reweighed ? parentBalance!.netUUg : Math.sqrt(u0 * u0 + input.children.length * uChild * uChild);
		const splitId = randomUUID();

		// The children's serials and codes are taken from the collection's counter by the statement that
		// writes them (item_code, migration 0052): the counter's row stays locked from there to the
		// commit, so serials stay gapless and a refused split takes none. Until then a child is known by
		// its position, and its code in the trail event by a mark the statement fills in.
		const mark = `@${randomUUID()}@`;
		const children = input.children.map((c, i) => ({
			id: randomUUID(),
			ord: i,
			mark: `${mark}${i}`,
			massUg: c.massUg,
			uUg: balance ? uChild : null,
			tareUg: c.tareUg ?? 0,
			description: c.description || `Aliquot of ${parent.code}`,
			container: c.container ?? '',
			storagePlace: c.storagePlace ?? parent.storage_place,
			belowMinimum: budget.belowMinimum.includes(i),
			weighingId: balance ? randomUUID() : null
		}));
		const parentWeighingId = parentBalance && budget.reweighed ? randomUUID() : null;
		interface WeighingRow { id: string | null; item: string; purpose: string; gross: number; tare: number; net: number; below: boolean; reason: string | null | undefined; balance: string; u: number; uu: number; min: number }
		const on = (b: BalanceView) => ({ balance: b.id, u: b.netUUg, uu: b.netExpandedUg, min: b.minimumWeightUg });
		const weighings: WeighingRow[] = balance
			? children.map((c) => ({ id: c.weighingId, item: c.id, purpose: 'split_child', gross: c.massUg + c.tareUg, tare: c.tareUg, net: c.massUg, below: c.belowMinimum, reason: c.belowMinimum ? reason : null, ...on(balance) }))
			: [];
		if (parentBalance && parentWeighingId) {
			const below = budget.parentAfterUg < parentBalance.minimumWeightUg;
			weighings.push({ id: parentWeighingId, item: parent.id, purpose: 'split_parent_after', gross: budget.parentAfterUg, tare: 0, net: budget.parentAfterUg, below, reason: below ? (reason ?? 'parent remainder below the minimum weight') : null, ...on(parentBalance) });
		}

		// ledger: the parent gives each child its mass, then the measured loss; each child starts with its
		// mass. The parent's entries are numbered after its last one (it is locked), a child's from 1;
		// `child`: the note names that child's code, filled in by the statement.
		const entries: object[] = [];
		let running = parent.mass_ug;
		let uRun = u0 * u0;
		let seq = 1;
		// a measured loss, or the few µg by which unweighed children exceed the parent within 2·u_L.
		// A negative loss (mass that appeared within the measurement) is booked before the children
		// are taken out, so the running balance never goes below zero.
		const booksLoss = budget.reweighed || budget.lossUg !== 0;
		const bookLoss = () => {
			running -= budget.lossUg;
			entries.push({ item: parent.id, own: true, seq: seq++, kind: 'split_loss', delta: -budget.lossUg, after: running, u: uAfter, counterpart: null, weighing: parentWeighingId, child: null, note: reason ?? '' });
		};
		if (booksLoss && budget.lossUg < 0) bookLoss();
		for (const c of children) {
			running -= c.massUg;
			uRun += uChild * uChild;
			entries.push({ item: parent.id, own: true, seq: seq++, kind: 'split_out', delta: -c.massUg, after: running, u: Math.sqrt(uRun), counterpart: c.id, weighing: null, child: c.ord, note: '' });
		}
		if (booksLoss && budget.lossUg >= 0) bookLoss();
		for (const c of children) {
			entries.push({ item: c.id, own: false, seq: 1, kind: 'split_in', delta: c.massUg, after: c.massUg, u: c.uUg, counterpart: parent.id, weighing: c.weighingId, child: null, note: `from ${parent.code}` });
		}
		if (running !== budget.parentAfterUg) throw new Error(`ledger of ${parent.code} does not close: ${running} ≠ ${budget.parentAfterUg}`);

		const at = new Date();
		const result = {
			splitId,
			at: at.toISOString(),
			parentCode: parent.code,
			parentBeforeUg: parent.mass_ug,
			parentAfterUg: budget.parentAfterUg,
			childrenTotalUg: budget.childrenTotalUg,
			lossUg: budget.lossUg,
			lossUUg: budget.lossU,
			reweighed: budget.reweighed,
			verdict: budget.verdict,
			reason: reason ?? null,
			handlingSessionId: input.handlingSessionId ?? null,
			issues: budget.issues.map((i) => i.message),
			balance: balance ? { id: balance.id, name: balance.name } : null,
			...(parentBalance && parentBalance !== balance ? { parentBalance: { id: parentBalance.id, name: parentBalance.name } } : {}),
			children: children.map((c) => ({ code: c.mark, massUg: c.massUg, uUg: c.uUg, belowMinimum: c.belowMinimum }))
		};
		// the change and its trail event in one round trip: the split's statement, then the trail's
		const n = children.length;
		const trail = trailStatement(
			{ actor: trailActor(who), action: 'item.split', subjectType: 'item', subjectId: parent.id, before: { code: parent.code, massUg: parent.mass_ug }, after: result },
			'trail',
			{
				marks: children.map((c) => c.mark),
				values: '(SELECT array_agg(k.code ORDER BY k.ord) FROM k)',
				// the collection's row is locked first (by the serials), as every writer does
				after: '(SELECT count(*) FROM k)'
			}
		);
		// the change and its trail event in one statement, prepared (planning it would cost as much as
		// running it)
		const [written] = await preparedQuery<{ split_written: string; codes: string[]; trail_seq: string; trail_prev_hash: string; trail_hash: string }>(
			t,
			`WITH c AS (
				UPDATE collections SET next_serial = next_serial + CAST(:n AS int) WHERE id = CAST(:collection AS uuid) RETURNING prefix, next_serial - CAST(:n AS int) AS first
			), k AS (
				SELECT x.*, c.first + x.ord AS serial, item_code(c.prefix, c.first + x.ord) AS code
				FROM c, jsonb_to_recordset(CAST(:children AS jsonb)) AS x(id uuid, ord int, description text, mass bigint, u double precision, container text, storage text)
			), base AS (
				SELECT coalesce(max(seq), 0) AS seq FROM ledger_entries WHERE item_id = CAST(:parent AS uuid)
			), s AS (
				INSERT INTO splits (id, at, parent_id, balance_id, parent_before_ug, parent_after_ug, children_total_ug, loss_ug, loss_u_ug, reweighed, verdict, reason, operator_id, handling_session_id)
				VALUES (:split, :at, :parent, :balance, :p0, :p1, :total, :loss, :lossU, :reweighed, :verdict, :reason, :op, :session) RETURNING id
			), i AS (
				INSERT INTO items (id, collection_id, serial, code, parent_id, depth, kind, description, initial_mass_ug, mass_ug, mass_u_ug,
				                   holder_lab_id, container, storage_place, split_id, created_by)
				SELECT k.id, CAST(:collection AS uuid), k.serial, k.code, CAST(:parent AS uuid), CAST(:depth AS int), 'aliquot', k.description, k.mass, k.mass, k.u, NULL, k.container, k.storage,
				       CAST(:split AS uuid), CAST(:op AS uuid) FROM k
			), w AS (
				INSERT INTO weighings (id, item_id, balance_id, purpose, gross_ug, tare_ug, net_ug, u_ug, expanded_ug, minimum_weight_ug, below_minimum, reason, split_id, operator_id)
				SELECT x.id, x.item, x.balance, x.purpose, x.gross, x.tare, x.net, x.u, x.uu, x.min,
				       x.below, x.reason, CAST(:split AS uuid), CAST(:op AS uuid)
				FROM jsonb_to_recordset(CAST(:weighings AS jsonb)) AS x(id uuid, item uuid, purpose text, gross bigint, tare bigint, net bigint, below boolean, reason text, balance uuid, u double precision, uu double precision, min bigint)
			), l AS (
				INSERT INTO ledger_entries (item_id, seq, kind, delta_ug, balance_after_ug, u_after_ug, split_id, weighing_id, counterpart_id, note, actor_id)
				SELECT x.item, x.seq + CASE WHEN x.own THEN base.seq ELSE 0 END, x.kind, x.delta, x.after, x.u, CAST(:split AS uuid), x.weighing, x.counterpart,
				       CASE WHEN x.child IS NULL THEN x.note ELSE 'to ' || (SELECT k.code FROM k WHERE k.ord = x.child) END, CAST(:op AS uuid)
				FROM base, jsonb_to_recordset(CAST(:entries AS jsonb)) AS x(item uuid, own boolean, seq int, kind text, delta bigint, after bigint, u double precision, weighing uuid, counterpart uuid, child int, note text)
			), p AS (
				UPDATE items SET mass_ug = :p1, mass_u_ug = :uAfter, updated_at = now() WHERE id = :parent
			), ${trail.ctes}
			SELECT s.id AS split_written, (SELECT json_agg(k.code ORDER BY k.ord) FROM k) AS codes,
			       t.seq AS trail_seq, t.prev_hash AS trail_prev_hash, t.hash AS trail_hash
			FROM s, ${trail.returned} t`,
			{
				...trail.replacements,
				at,
				split: splitId, parent: parent.id, balance: balance?.id ?? null, p0: parent.mass_ug, p1: budget.parentAfterUg, total: budget.childrenTotalUg,
				loss: budget.lossUg, lossU: budget.lossU, reweighed: budget.reweighed, verdict: budget.verdict, reason: reason ?? null, op: who.id, session: input.handlingSessionId ?? null,
				collection: parent.collection_id, depth: parent.depth + 1,
				uAfter: parent.mass_u_ug === null && !balance && !parentBalance ? null : uAfter,
				n,
				children: JSON.stringify(children.map((c) => ({ id: c.id, ord: c.ord, description: c.description, mass: c.massUg, u: c.uUg, container: c.container, storage: c.storagePlace }))),
				weighings: JSON.stringify(weighings),
				entries: JSON.stringify(entries)
			}
		);
		if (written?.split_written !== splitId) throw new Error(`split ${splitId} was not written`);
		trailRowOf([written]); // throws unless the trail event was appended
		const codes = written.codes as string[];
		if (!Array.isArray(codes) || codes.length !== n) throw new Error(`split ${splitId}: expected ${n} child codes`);
		return { ...result, children: result.children.map((c, i) => ({ ...c, code: codes[i] })) };
	});
}
