import { z } from 'zod';
import { QueryTypes, type Sequelize, type Transaction } from 'sequelize';
import { ApiProblem } from '../api';
import { appendTrail, actorOf } from '../trail';
import type { SessionUser } from '../auth/types';
import { canSeeLab } from '../auth/scope';
import { codeOrProblem, micrograms } from '../registry/common';
import { formatMg } from '../../domain/mass';
import { conflict, forbid, idOf, note, notify, recipients, requestNumber } from './common';


export const usageInput = z.strictObject({
	itemCode: z.string({ error: 'must be an item code' }),
	consumedUg: micrograms({ allowZero: true }),
	returnedUg: micrograms({ allowZero: true }),
	lostUg: micrograms({ allowZero: true }).default(0),
	resultsSummary: note(8000).min(10, 'summarise the results in at least 10 characters')
});

/**
 * A lab's account of one aliquot: allocated = consumed + returned + lost, which must close within
 * the expanded uncertainty U = 2u of the allocated mass (GUM 6.2–6.3, k = 2). A larger gap is
 * recorded but flagged to the curators; reporting more than was allocated beyond U is refused.
 */
export async function submitUsage(sq: Sequelize, user: SessionUser, requestId: string, input: z.infer<typeof usageInput>) {
	if (user.role !== 'lab_member') forbid('Usage is reported by the lab that holds the material.');
	const code = codeOrProblem(input.itemCode);
	return sq.transaction(async (t) => {
		const [r] = await sq.query<{ id: string; number: number; lab_id: string; state: string }>(
			'SELECT id, number, lab_id, state FROM allocation_requests WHERE id = :id FOR UPDATE',
			{ type: QueryTypes.SELECT, replacements: { id: idOf(requestId, 'request') }, transaction: t }
		);
		if (!r || !canSeeLab(user, r.lab_id)) throw new ApiProblem(404, 'not_found', 'No such allocation request is visible to you.');
		if (r.state !== 'fulfilled') conflict(`${requestNumber(r.number)} is ${r.state.replace('_', ' ')}; usage is reported once the material has been received.`);
		const [it] = await sq.query<{ id: string; code: string; mass_ug: number; u: number | null; state: string; holder_lab_id: string | null; reported: boolean }>(
			`SELECT i.id, i.code, i.mass_ug, i.mass_u_ug AS u, i.state, i.holder_lab_id, EXISTS (SELECT 1 FROM usage_reports u WHERE u.item_id = i.id) AS reported
			 FROM allocation_items ai JOIN items i ON i.id = ai.item_id WHERE ai.request_id = :r AND i.code = :code FOR UPDATE OF i`,
			{ type: QueryTypes.SELECT, replacements: { r: r.id, code }, transaction: t }
		);
		if (!it) throw new ApiProblem(422, 'invalid_input', `itemCode: ${code} was not allocated under ${requestNumber(r.number)}.`, { itemCode: 'not allocated under this request' });
		if (it.reported) conflict(`Usage of ${code} has been reported already; reports are not changed, add a note on the request instead.`);
		if (it.state !== 'on_loan' || it.holder_lab_id !== user.labId) conflict(`${code} is not on loan to your lab.`);
		const allocated = Number(it.mass_ug);
		const tolerance = Math.ceil(2 * (it.u ?? 0));
		const accounted = input.consumedUg + input.returnedUg + input.lostUg;
		const gap = allocated - accounted;
		if (gap < -tolerance) {
			throw new ApiProblem(422, 'mass_appeared', `The report accounts for ${formatMg(accounted)} but ${formatMg(allocated)} was allocated (U = ${tolerance} µg): consumed + returned + lost cannot exceed it. Check the figures.`, {
				consumedUg: 'consumed + returned + lost exceeds the allocated mass'
			});
		}
		const flagged = Math.abs(gap) > tolerance;
		await sq.query(
			`INSERT INTO usage_reports (request_id, lab_id, item_id, allocated_ug, consumed_ug, returned_ug, lost_ug, gap_ug, tolerance_ug, gap_flagged, results_summary, submitted_by)
			 VALUES (:r, :lab, :item, :allocated, :consumed, :returned, :lost, :gap, :tol, :flagged, :summary, :by)`,
			{ transaction: t, replacements: { r: r.id, lab: r.lab_id, item: it.id, allocated, consumed: input.consumedUg, returned: input.returnedUg, lost: input.lostUg, gap, tol: tolerance, flagged, summary: input.resultsSummary, by: user.id } }
		);
		// The ledger of the aliquot: consumption, loss in use and any unexplained gap, down to the returned mass.
		const [{ seq }] = await sq.query<{ seq: number }>('SELECT coalesce(max(seq), 0)::int AS seq FROM ledger_entries WHERE item_id = :id', { type: QueryTypes.SELECT, replacements: { id: it.id }, transaction: t });
		let balance = allocated;
		let n = seq;
		for (const [kind, delta, text] of [
			['consumed', -input.consumedUg, 'consumed in analysis'],
			['lost_in_use', -input.lostUg, 'lost in use'],
			['usage_gap', -gap, flagged ? 'unexplained gap, flagged' : 'gap within the expanded uncertainty']
		] as const) {
			if (delta === 0) continue;
			balance += delta;
			n++;
			await sq.query(
				`INSERT INTO ledger_entries (item_id, seq, kind, delta_ug, balance_after_ug, u_after_ug, note, actor_id) VALUES (:item, :seq, :kind, :delta, :bal, :u, :note, :by)`,
				{ transaction: t, replacements: { item: it.id, seq: n, kind, delta, bal: balance, u: it.u, note: `${text} (${requestNumber(r.number)})`, by: user.id } }
			);
		}
		const state = input.returnedUg === 0 ? 'consumed' : 'on_loan';
		await sq.query('UPDATE items SET mass_ug = :m, state = :s, updated_at = now() WHERE id = :id', { replacements: { m: input.returnedUg, s: state, id: it.id }, transaction: t });
		await appendTrail(sq, t, {
			actor: actorOf(user), action: 'usage.reported', subjectType: 'item', subjectId: it.code,
			before: { massUg: allocated, state: it.state }, after: { massUg: input.returnedUg, state, consumedUg: input.consumedUg, lostUg: input.lostUg, gapUg: gap, toleranceUg: tolerance, flagged, request: requestNumber(r.number) }
		});
		if (flagged) {
			const to = await recipients(sq, t, { roles: ['curator'] });
			await notify(sq, t, to, 'usage.gap', `${requestNumber(r.number)}: usage of ${it.code} does not close`, [
				`The usage report for ${it.code} leaves ${formatMg(gap)} unaccounted for, beyond the expanded uncertainty of ${tolerance} µg.`
			], `/requests/${r.id}`);
		}
		await closeIfSettled(sq, t, user, r.id);
		return { gapUg: gap, toleranceUg: tolerance, flagged, itemState: state };
	});
}

/** Closes a fulfilled request once every aliquot is reported and all that remained is back at the facility. */
export async function closeIfSettled(sq: Sequelize, t: Transaction, user: SessionUser, requestId: string) {
	const [row] = await sq.query<{ open: number }>(
		`SELECT count(*)::int AS open FROM allocation_items ai JOIN items i ON i.id = ai.item_id
		 WHERE ai.request_id = :id AND (NOT EXISTS (SELECT 1 FROM usage_reports u WHERE u.item_id = i.id) OR i.state NOT IN ('consumed', 'stored'))`,
		{ type: QueryTypes.SELECT, replacements: { id: requestId }, transaction: t }
	);
	if (row.open > 0) return false;
	const closed = await sq.query(`UPDATE allocation_requests SET state = 'closed', updated_at = now() WHERE id = :id AND state = 'fulfilled' RETURNING id`, {
		type: QueryTypes.SELECT, replacements: { id: requestId }, transaction: t
	});
	if (closed.length) await appendTrail(sq, t, { actor: { id: user.id, label: user.email }, action: 'request.closed', subjectType: 'allocation_request', subjectId: requestId, before: { state: 'fulfilled' }, after: { state: 'closed' } });
	return closed.length > 0;
}

/** Reminds labs once of usage reports past their due date. */
export async function remindOverdueUsage(sq: Sequelize) {
	return sq.transaction(async (t) => {
		const due = await sq.query<{ id: string; number: number; lab_id: string }>(
			`SELECT id, number, lab_id FROM allocation_requests WHERE state = 'fulfilled' AND usage_due_at < now() AND usage_reminded_at IS NULL FOR UPDATE SKIP LOCKED`,
			{ type: QueryTypes.SELECT, transaction: t }
		);
		for (const r of due) {
			const to = await recipients(sq, t, { roles: ['lab_member'], labId: r.lab_id });
			await notify(sq, t, to, 'usage.overdue', `${requestNumber(r.number)}: usage report overdue`, [`The usage report for ${requestNumber(r.number)} is past its due date. Report what was consumed and what you return.`], `/requests/${r.id}`);
			await sq.query('UPDATE allocation_requests SET usage_reminded_at = now() WHERE id = :id', { replacements: { id: r.id }, transaction: t });
		}
		return due.length;
	});
}
