import { z } from 'zod';
import { QueryTypes, type Sequelize, type Transaction } from 'sequelize';
import { ApiProblem } from '../api';
import { appendTrail, actorOf } from '../trail';
import type { SessionUser } from '../auth/types';
import { formatMg } from '../../domain/mass';
import { conflict, forbid, notify, recipients, requestNumber, REQUEST_STATE_LABELS, type RequestState } from './common';
import { declineInput, grantInput, type RequestInput } from './request-inputs';
import { loadRequest, requestView, type RequestRow } from './request-queries';
import { grantableUg } from './request-budget';
import { releaseEarmarks } from './request-earmarks';
function checkComplete(input: { analysisPlan: string; justification: string }) {
	const fields: Record<string, string> = {};
	if (input.analysisPlan.length < 20) fields.analysisPlan = 'describe the analysis in at least 20 characters before submitting';
	if (input.justification.length < 20) fields.justification = 'justify the request in at least 20 characters before submitting';
	if (Object.keys(fields).length) throw new ApiProblem(422, 'incomplete', `Cannot submit yet: ${Object.entries(fields).map(([k, v]) => `${k}: ${v}`).join('; ')}.`, fields);
}

async function collectionByPrefix(sq: Sequelize, t: Transaction, prefix: string) {
	const [c] = await sq.query<{ id: string }>('SELECT id FROM collections WHERE prefix = :p', { type: QueryTypes.SELECT, replacements: { p: prefix }, transaction: t });
	if (!c) throw new ApiProblem(422, 'unknown_collection', `collection: there is no collection with prefix ${prefix}.`, { collection: 'no such collection' });
	return c.id;
}

/**
 * The items a lab picked on the offer, as ids in the order given: each must be on offer in the
 * request's collection (stored at the facility, not a blank), or the whole request is refused.
 */
async function offeredItemIds(sq: Sequelize, t: Transaction, collectionId: string, prefix: string, codes: readonly string[]): Promise<string[]> {
	if (!codes.length) return [];
	const rows = await sq.query<{ id: string; code: string; collection_id: string; state: string; holder_lab_id: string | null; kind: string }>(
		'SELECT id, code, collection_id, state, holder_lab_id, kind FROM items WHERE code IN (:codes)',
		{ type: QueryTypes.SELECT, replacements: { codes: [...codes].map((c) => c.toUpperCase()) }, transaction: t }
	);
	return codes.map((text, i) => {
		const code = text.toUpperCase();
		const r = rows.find((x) => x.code === code);
		const field = `itemCodes.${i}`;
		const refuse = (why: string): never => {
			throw new ApiProblem(422, 'invalid_input', `${field}: ${why}.`, { [field]: why });
		};
		if (!r || r.holder_lab_id !== null || r.state !== 'stored' || r.kind === 'blank') return refuse(`${code} is not on offer`);
		if (r.collection_id !== collectionId) return refuse(`${code} is not in collection ${prefix}`);
		if (codes.findIndex((c) => c.toUpperCase() === code) !== i) return refuse(`${code} is listed twice`);
		return r.id;
	});
}

async function notifySubmitted(sq: Sequelize, t: Transaction, r: { id: string; number: number }, labName: string, prefix: string, massUg: number) {
	const to = await recipients(sq, t, { roles: ['curator'] });
	await notify(sq, t, to, 'request.submitted', `${requestNumber(r.number)} submitted by ${labName}`, [
		`${labName} asks for ${formatMg(massUg)} of collection ${prefix}.`,
		'It is waiting in the review queue.'
	], `/requests/${r.id}`);
}

/** A lab member drafts (and optionally submits) a request for their own lab. */
export async function createRequest(sq: Sequelize, user: SessionUser, input: RequestInput) {
	if (user.role !== 'lab_member' || !user.labId) forbid('Only lab members ask for material, on behalf of their lab.');
	if (input.expectedConsumptionUg !== undefined && input.expectedConsumptionUg > input.massUg) {
		throw new ApiProblem(422, 'invalid_input', 'expectedConsumptionUg: cannot exceed the mass asked for.', { expectedConsumptionUg: 'cannot exceed massUg' });
	}
	if (input.submit) checkComplete(input);
	return sq.transaction(async (t) => {
		const collectionId = await collectionByPrefix(sq, t, input.collection);
		const itemIds = await offeredItemIds(sq, t, collectionId, input.collection, input.itemCodes ?? []);
		const state: RequestState = input.submit ? 'submitted' : 'draft';
		const [row] = await sq.query<{ id: string; number: number }>(
			`INSERT INTO allocation_requests (lab_id, requested_by, collection_id, mass_ug, analysis_plan, techniques, destructive, expected_consumption_ug,
			   return_plan, justification, state, submitted_at, pieces, constraints, item_ids)
			 VALUES (:lab, :by, :col, :mass, :plan, ARRAY(SELECT jsonb_array_elements_text(CAST(:techniques AS jsonb))), :destructive, :expected, :ret, :just, :state, :submittedAt,
			   :pieces, CAST(:constraints AS jsonb), CAST(:itemIds AS uuid[])) RETURNING id, number`,
			{
				type: QueryTypes.SELECT, transaction: t,
				replacements: {
					lab: user.labId, by: user.id, col: collectionId, mass: input.massUg, plan: input.analysisPlan,
					techniques: JSON.stringify(input.techniques), destructive: input.destructive,
					expected: input.expectedConsumptionUg ?? (input.destructive ? input.massUg : 0), ret: input.returnPlan,
					just: input.justification, state, submittedAt: input.submit ? new Date() : null,
					pieces: input.pieces ?? 1, constraints: JSON.stringify(input.constraints ?? {}), itemIds: `{${itemIds.join(',')}}`
				}
			}
		);
		await appendTrail(sq, t, { actor: actorOf(user), action: input.submit ? 'request.submitted' : 'request.drafted', subjectType: 'allocation_request', subjectId: row.id, after: { ...input, state } });
		if (input.submit) await notifySubmitted(sq, t, row, user.labName ?? '', input.collection, input.massUg);
		return row.id;
	});
}

/** Edits a draft, and optionally submits it. */
export async function updateDraft(sq: Sequelize, user: SessionUser, id: string, input: RequestInput) {
	return sq.transaction(async (t) => {
		const r = await loadRequest(sq, user, id, t, true);
		if (user.role !== 'lab_member') forbid('Only the requesting lab edits its draft.');
		if (r.state !== 'draft') conflict(`${requestNumber(r.number)} is ${REQUEST_STATE_LABELS[r.state].toLowerCase()}; only a draft can be edited.`);
		if (input.submit) checkComplete(input);
		const collectionId = await collectionByPrefix(sq, t, input.collection);
		const itemIds = await offeredItemIds(sq, t, collectionId, input.collection, input.itemCodes ?? []);
		await sq.query(
			`UPDATE allocation_requests SET collection_id = :col, mass_ug = :mass, analysis_plan = :plan, techniques = ARRAY(SELECT jsonb_array_elements_text(CAST(:techniques AS jsonb))), destructive = :destructive,
			   expected_consumption_ug = :expected, return_plan = :ret, justification = :just, state = :state,
			   submitted_at = CASE WHEN :submit THEN now() ELSE NULL END, pieces = :pieces, constraints = CAST(:constraints AS jsonb), item_ids = CAST(:itemIds AS uuid[]),
			   updated_at = now() WHERE id = :id`,
			{
				transaction: t,
				replacements: {
					id: r.id, col: collectionId, mass: input.massUg, plan: input.analysisPlan, techniques: JSON.stringify(input.techniques),
					destructive: input.destructive, expected: input.expectedConsumptionUg ?? (input.destructive ? input.massUg : 0), ret: input.returnPlan,
					just: input.justification, state: input.submit ? 'submitted' : 'draft', submit: !!input.submit,
					pieces: input.pieces ?? 1, constraints: JSON.stringify(input.constraints ?? {}), itemIds: `{${itemIds.join(',')}}`
				}
			}
		);
		await appendTrail(sq, t, { actor: actorOf(user), action: input.submit ? 'request.submitted' : 'request.draft_saved', subjectType: 'allocation_request', subjectId: r.id, before: requestView(r), after: input });
		if (input.submit) await notifySubmitted(sq, t, r, r.lab_name, input.collection, input.massUg);
		return r.id;
	});
}

async function setState(sq: Sequelize, t: Transaction, user: SessionUser, r: RequestRow, state: RequestState, action: string, extra: Record<string, unknown> = {}) {
	const sets = Object.keys(extra).map((k) => `${k} = :${k}`);
	await sq.query(`UPDATE allocation_requests SET state = :state, updated_at = now()${sets.length ? ', ' + sets.join(', ') : ''} WHERE id = :id`, {
		replacements: { id: r.id, state, ...extra }, transaction: t
	});
	await appendTrail(sq, t, { actor: actorOf(user), action, subjectType: 'allocation_request', subjectId: r.id, before: { state: r.state }, after: { state, ...extra } });
}

export async function submitRequest(sq: Sequelize, user: SessionUser, id: string) {
	return sq.transaction(async (t) => {
		const r = await loadRequest(sq, user, id, t, true);
		if (user.role !== 'lab_member') forbid('Only the requesting lab submits its request.');
		if (r.state !== 'draft') conflict(`${requestNumber(r.number)} is ${REQUEST_STATE_LABELS[r.state].toLowerCase()} already.`);
		checkComplete({ analysisPlan: r.analysis_plan, justification: r.justification });
		await setState(sq, t, user, r, 'submitted', 'request.submitted', { submitted_at: new Date() });
		await notifySubmitted(sq, t, r, r.lab_name, r.prefix, r.mass_ug);
	});
}

/** Withdrawal by the lab while nothing has been shipped; earmarked aliquots go back to storage. */
export async function withdrawRequest(sq: Sequelize, user: SessionUser, id: string) {
	return sq.transaction(async (t) => {
		const r = await loadRequest(sq, user, id, t, true);
		if (user.role !== 'lab_member') forbid('Only the requesting lab withdraws its request.');
		if (!['draft', 'submitted', 'in_review', 'granted'].includes(r.state)) conflict(`${requestNumber(r.number)} is ${REQUEST_STATE_LABELS[r.state].toLowerCase()}; it can no longer be withdrawn.`);
		const shipped = await sq.query(`SELECT 1 FROM transfers WHERE request_id = :id AND state IN ('dispatched', 'received')`, { type: QueryTypes.SELECT, replacements: { id: r.id }, transaction: t });
		if (shipped.length) conflict(`${requestNumber(r.number)} has material on its way; it can no longer be withdrawn.`);
		await releaseEarmarks(sq, t, user, r.id);
		await sq.query(`UPDATE transfers SET state = 'cancelled', updated_at = now() WHERE request_id = :id AND state = 'prepared'`, { replacements: { id: r.id }, transaction: t });
		await setState(sq, t, user, r, 'withdrawn', 'request.withdrawn');
		const to = await recipients(sq, t, { roles: ['curator'] });
		await notify(sq, t, to, 'request.withdrawn', `${requestNumber(r.number)} withdrawn by ${r.lab_name}`, [`${r.lab_name} withdrew its request for ${r.prefix}.`], `/requests/${r.id}`);
	});
}

export async function startReview(sq: Sequelize, user: SessionUser, id: string) {
	return sq.transaction(async (t) => {
		const r = await loadRequest(sq, user, id, t, true);
		if (r.state !== 'submitted') conflict(`${requestNumber(r.number)} is ${REQUEST_STATE_LABELS[r.state].toLowerCase()}; only a submitted request goes into review.`);
		await setState(sq, t, user, r, 'in_review', 'request.review_started');
	});
}

/** Grants (possibly less than asked). Beyond the allocatable mass only an admin may cut into the reserve, with a reason. */
export async function grantRequest(sq: Sequelize, user: SessionUser, id: string, input: z.infer<typeof grantInput>) {
	return sq.transaction(async (t) => {
		const r = await loadRequest(sq, user, id, t, true);
		if (!['submitted', 'in_review'].includes(r.state)) conflict(`${requestNumber(r.number)} is ${REQUEST_STATE_LABELS[r.state].toLowerCase()}; only a request under review can be granted.`);
		if (input.grantedUg > r.mass_ug) throw new ApiProblem(422, 'invalid_input', `grantedUg: ${input.grantedUg} µg is more than the ${r.mass_ug} µg asked for.`, { grantedUg: 'cannot exceed the mass asked for' });
		// Serialise grants per collection: the budget below is read and spent under this lock.
		await sq.query('SELECT id FROM collections WHERE id = :id FOR UPDATE', { replacements: { id: r.collection_id }, transaction: t });
		const budget = await grantableUg(sq, t, r.collection_id);
		let override = false;
		if (input.grantedUg > budget.grantableUg) {
			if (!input.overrideReason || user.role !== 'admin') {
				conflict(
					`Granting ${formatMg(input.grantedUg)} would cut into the pristine reserve of ${r.prefix}: ${budget.grantableUg} µg can be granted now.` +
						(user.role === 'admin' ? ' Give an override reason to cut into the reserve.' : ' Only an admin can override the reserve, with a reason.'),
					{ availableUg: budget.grantableUg }
				);
			}
			if (input.grantedUg > budget.beyondReserveUg) conflict(`Only ${budget.beyondReserveUg} µg of ${r.prefix} is at the facility and not promised elsewhere, reserve included.`, { availableUg: budget.beyondReserveUg });
			override = true;
		}
		await setState(sq, t, user, r, 'granted', 'request.granted', {
			granted_ug: input.grantedUg, decided_by: user.id, decided_at: new Date(), decision_note: input.note ?? null,
			...(override ? { reserve_override_by: user.id, reserve_override_reason: input.overrideReason } : {})
		});
		const to = await recipients(sq, t, { roles: ['lab_member'], labId: r.lab_id });
		await notify(sq, t, to, 'request.granted', `${requestNumber(r.number)} granted`, [
			`Your request for ${r.prefix} was granted: ${formatMg(input.grantedUg)}${input.grantedUg < r.mass_ug ? ` of the ${formatMg(r.mass_ug)} asked for` : ''}.`,
			...(input.note ? [`Note from the curator: ${input.note}`] : []),
			'The facility now prepares the aliquot and the shipment.'
		], `/requests/${r.id}`);
		return { grantedUg: input.grantedUg, override, grantableBeforeUg: budget.grantableUg };
	});
}

export async function declineRequest(sq: Sequelize, user: SessionUser, id: string, input: z.infer<typeof declineInput>) {
	return sq.transaction(async (t) => {
		const r = await loadRequest(sq, user, id, t, true);
		if (!['submitted', 'in_review'].includes(r.state)) conflict(`${requestNumber(r.number)} is ${REQUEST_STATE_LABELS[r.state].toLowerCase()}; only a request under review can be declined.`);
		await setState(sq, t, user, r, 'declined', 'request.declined', { decided_by: user.id, decided_at: new Date(), decision_note: input.reason });
		const to = await recipients(sq, t, { roles: ['lab_member'], labId: r.lab_id });
		await notify(sq, t, to, 'request.declined', `${requestNumber(r.number)} declined`, [`Your request for ${r.prefix} was declined.`, `Reason: ${input.reason}`], `/requests/${r.id}`);
	});
}
