import { z } from 'zod';
import { QueryTypes, type Sequelize, type Transaction } from 'sequelize';
import { ApiProblem } from '../api';
import { allocatableUg } from '../../domain/budget';
import { appendTrail, actorOf } from '../trail';
import type { SessionUser } from '../auth/types';
import { labFilter, canSeeLab } from '../auth/scope';
import { findItem, micrograms } from '../registry/common';
import { formatMg } from '../../domain/mass';
import { conflict, forbid, idOf, note, notify, recipients, requestNumber, REQUEST_STATE_LABELS, type RequestState } from './common';


export const requestInput = z.strictObject({
	collection: z.string({ error: 'must be a collection prefix such as TRN' }).trim().toUpperCase().regex(/^[A-Z]{2,5}$/, 'must be a collection prefix such as TRN'),
	massUg: micrograms(),
	analysisPlan: note(4000).default(''),
	techniques: z.array(note(80).min(1, 'must not be empty'), { error: 'must be a list of technique names' }).max(12, 'at most 12 techniques').default([]),
	destructive: z.boolean({ error: 'must be true or false' }),
	expectedConsumptionUg: micrograms({ allowZero: true }).optional(),
	returnPlan: note(2000).default(''),
	justification: note(4000).default(''),
	submit: z.boolean({ error: 'must be true or false' }).optional()
});
export type RequestInput = z.infer<typeof requestInput>;

export const grantInput = z.strictObject({
	grantedUg: micrograms(),
	note: note(2000).optional(),
	overrideReason: note(2000).min(10, 'must say in at least 10 characters why the reserve may be cut into').optional()
});
export const declineInput = z.strictObject({ reason: note(2000).min(5, 'is required: tell the lab why (at least 5 characters)') });
export const earmarkInput = z.strictObject({ itemCode: z.string({ error: 'must be an item code' }) });

interface RequestRow {
	id: string;
	number: number;
	lab_id: string;
	lab_name: string;
	requested_by: string;
	requester_name: string;
	collection_id: string;
	prefix: string;
	collection_name: string;
	mass_ug: number;
	analysis_plan: string;
	techniques: string[];
	destructive: boolean;
	expected_consumption_ug: number;
	return_plan: string;
	justification: string;
	state: RequestState;
	granted_ug: number | null;
	decided_by: string | null;
	decider_name: string | null;
	decided_at: Date | null;
	decision_note: string | null;
	reserve_override_reason: string | null;
	submitted_at: Date | null;
	fulfilled_at: Date | null;
	usage_due_at: Date | null;
	created_at: Date;
	updated_at: Date;
}

const REQUEST_SELECT = `
	SELECT r.*, l.name AS lab_name, u.name AS requester_name, c.prefix, c.name AS collection_name, d.name AS decider_name
	FROM allocation_requests r JOIN labs l ON l.id = r.lab_id JOIN users u ON u.id = r.requested_by
	JOIN collections c ON c.id = r.collection_id LEFT JOIN users d ON d.id = r.decided_by`;

export function requestView(r: RequestRow) {
	return {
		id: r.id,
		number: requestNumber(r.number),
		lab: { id: r.lab_id, name: r.lab_name },
		requestedBy: r.requester_name,
		collection: r.prefix,
		collectionName: r.collection_name,
		massUg: r.mass_ug,
		analysisPlan: r.analysis_plan,
		techniques: r.techniques,
		destructive: r.destructive,
		expectedConsumptionUg: r.expected_consumption_ug,
		returnPlan: r.return_plan,
		justification: r.justification,
		state: r.state,
		stateLabel: REQUEST_STATE_LABELS[r.state],
		grantedUg: r.granted_ug,
		decidedBy: r.decider_name,
		decidedAt: r.decided_at,
		decisionNote: r.decision_note,
		reserveOverrideReason: r.reserve_override_reason,
		submittedAt: r.submitted_at,
		fulfilledAt: r.fulfilled_at,
		usageDueAt: r.usage_due_at,
		createdAt: r.created_at,
		updatedAt: r.updated_at
	};
}
export type RequestView = ReturnType<typeof requestView>;

async function loadRequest(sq: Sequelize, user: SessionUser, id: string, t?: Transaction, lock = false): Promise<RequestRow> {
	const rows = await sq.query<RequestRow>(`${REQUEST_SELECT} WHERE r.id = :id${lock ? ' FOR UPDATE OF r' : ''}`, {
		type: QueryTypes.SELECT, replacements: { id: idOf(id, 'request') }, transaction: t
	});
	const r = rows[0];
	if (!r || !canSeeLab(user, r.lab_id)) throw new ApiProblem(404, 'not_found', 'No such allocation request is visible to you.');
	return r;
}

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
		const state: RequestState = input.submit ? 'submitted' : 'draft';
		const [row] = await sq.query<{ id: string; number: number }>(
			`INSERT INTO allocation_requests (lab_id, requested_by, collection_id, mass_ug, analysis_plan, techniques, destructive, expected_consumption_ug,
			   return_plan, justification, state, submitted_at)
			 VALUES (:lab, :by, :col, :mass, :plan, ARRAY(SELECT jsonb_array_elements_text(CAST(:techniques AS jsonb))), :destructive, :expected, :ret, :just, :state, :submittedAt) RETURNING id, number`,
			{
				type: QueryTypes.SELECT, transaction: t,
				replacements: {
					lab: user.labId, by: user.id, col: collectionId, mass: input.massUg, plan: input.analysisPlan,
					techniques: JSON.stringify(input.techniques), destructive: input.destructive,
					expected: input.expectedConsumptionUg ?? (input.destructive ? input.massUg : 0), ret: input.returnPlan,
					just: input.justification, state, submittedAt: input.submit ? new Date() : null
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
		await sq.query(
			`UPDATE allocation_requests SET collection_id = :col, mass_ug = :mass, analysis_plan = :plan, techniques = ARRAY(SELECT jsonb_array_elements_text(CAST(:techniques AS jsonb))), destructive = :destructive,
			   expected_consumption_ug = :expected, return_plan = :ret, justification = :just, state = :state,
			   submitted_at = CASE WHEN :submit THEN now() ELSE NULL END, updated_at = now() WHERE id = :id`,
			{
				transaction: t,
				replacements: {
					id: r.id, col: collectionId, mass: input.massUg, plan: input.analysisPlan, techniques: JSON.stringify(input.techniques),
					destructive: input.destructive, expected: input.expectedConsumptionUg ?? (input.destructive ? input.massUg : 0), ret: input.returnPlan,
					just: input.justification, state: input.submit ? 'submitted' : 'draft', submit: !!input.submit
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

async function releaseEarmarks(sq: Sequelize, t: Transaction, user: SessionUser, requestId: string) {
	const items = await sq.query<{ id: string; code: string }>(
		`UPDATE items SET state = 'stored', updated_at = now() WHERE id IN (SELECT item_id FROM allocation_items WHERE request_id = :id) AND state = 'earmarked' RETURNING id, code`,
		{ type: QueryTypes.SELECT, replacements: { id: requestId }, transaction: t }
	);
	for (const it of items) {
		await appendTrail(sq, t, { actor: actorOf(user), action: 'item.earmark_released', subjectType: 'item', subjectId: it.code, before: { state: 'earmarked' }, after: { state: 'stored', requestId } });
	}
}

export async function startReview(sq: Sequelize, user: SessionUser, id: string) {
	return sq.transaction(async (t) => {
		const r = await loadRequest(sq, user, id, t, true);
		if (r.state !== 'submitted') conflict(`${requestNumber(r.number)} is ${REQUEST_STATE_LABELS[r.state].toLowerCase()}; only a submitted request goes into review.`);
		await setState(sq, t, user, r, 'in_review', 'request.review_started');
	});
}

/**
 * What a grant from a collection may give: the collection's allocatable mass (DESIGN §3.4:
 * pristine − reserve − earmarked − expanded uncertainty) less what earlier grants have promised
 * but not yet set aside. Call inside a transaction that holds the collection's row lock.
 */
export async function grantableUg(sq: Sequelize, t: Transaction, collectionId: string) {
	const [c] = await sq.query<{ reserve_fraction: string; pristine_ug: number; earmarked_ug: number; u2: number; outstanding_ug: number }>(
		`SELECT c.reserve_fraction,
		   (SELECT coalesce(sum(mass_ug), 0)::bigint FROM items WHERE collection_id = c.id AND state IN ('stored', 'earmarked') AND holder_lab_id IS NULL) AS pristine_ug,
		   (SELECT coalesce(sum(mass_ug), 0)::bigint FROM items WHERE collection_id = c.id AND state = 'earmarked') AS earmarked_ug,
		   (SELECT coalesce(sum(mass_u_ug ^ 2), 0) FROM items WHERE collection_id = c.id AND state IN ('stored', 'earmarked') AND holder_lab_id IS NULL) AS u2,
		   (SELECT coalesce(sum(greatest(r.granted_ug - coalesce((SELECT sum(ai.mass_ug) FROM allocation_items ai WHERE ai.request_id = r.id), 0), 0)), 0)::bigint
		      FROM allocation_requests r WHERE r.collection_id = c.id AND r.state = 'granted') AS outstanding_ug
		 FROM collections c WHERE c.id = :id`,
		{ type: QueryTypes.SELECT, replacements: { id: collectionId }, transaction: t }
	);
	const fraction = Number(c.reserve_fraction);
	const expandedUg = 2 * Math.sqrt(Number(c.u2));
	const allocatable = allocatableUg({ pristineUg: Number(c.pristine_ug), fraction, earmarkedUg: Number(c.earmarked_ug), expandedUg });
	const withoutReserve = Math.max(0, Number(c.pristine_ug) - Number(c.earmarked_ug) - Math.ceil(expandedUg) - Number(c.outstanding_ug));
	return { grantableUg: Math.max(0, allocatable - Number(c.outstanding_ug)), beyondReserveUg: withoutReserve, outstandingUg: Number(c.outstanding_ug) };
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

/** Sets an aliquot aside for a granted request: it becomes earmarked; the set-aside mass never exceeds the grant. */
export async function earmarkItem(sq: Sequelize, user: SessionUser, id: string, input: z.infer<typeof earmarkInput>) {
	return sq.transaction(async (t) => {
		const r = await loadRequest(sq, user, id, t, true);
		if (r.state !== 'granted') conflict(`${requestNumber(r.number)} is ${REQUEST_STATE_LABELS[r.state].toLowerCase()}; aliquots are set aside only for a granted request.`);
		const item = await findItem(sq, user, input.itemCode, { t, lock: true });
		if (item.collection_id !== r.collection_id) throw new ApiProblem(422, 'invalid_input', `itemCode: ${item.code} belongs to ${item.prefix}, the request is for ${r.prefix}.`, { itemCode: 'wrong collection' });
		if (item.kind === 'blank') throw new ApiProblem(422, 'invalid_input', `itemCode: ${item.code} is a blank; set aside sample material.`, { itemCode: 'is a blank' });
		if (item.state !== 'stored' || item.holder_lab_id !== null) conflict(`${item.code} is ${item.state.replace('_', ' ')}; only material stored at the facility can be set aside.`);
		const [{ total }] = await sq.query<{ total: number }>('SELECT coalesce(sum(mass_ug), 0)::bigint AS total FROM allocation_items WHERE request_id = :id', {
			type: QueryTypes.SELECT, replacements: { id: r.id }, transaction: t
		});
		const room = r.granted_ug! - Number(total);
		if (item.mass_ug > room) conflict(`${item.code} holds ${formatMg(item.mass_ug)}; only ${formatMg(room)} of the grant is still open. Split a smaller aliquot first.`, { availableUg: room });
		await sq.query(`UPDATE items SET state = 'earmarked', updated_at = now() WHERE id = :id`, { replacements: { id: item.id }, transaction: t });
		await sq.query('INSERT INTO allocation_items (request_id, item_id, mass_ug, added_by) VALUES (:r, :i, :m, :u)', {
			replacements: { r: r.id, i: item.id, m: item.mass_ug, u: user.id }, transaction: t
		});
		await appendTrail(sq, t, { actor: actorOf(user), action: 'item.earmarked', subjectType: 'item', subjectId: item.code, before: { state: 'stored' }, after: { state: 'earmarked', requestId: r.id, request: requestNumber(r.number) } });
		return { code: item.code, massUg: item.mass_ug };
	});
}

export const listRequestsQuery = z.strictObject({
	state: z.enum(['draft', 'submitted', 'in_review', 'granted', 'declined', 'fulfilled', 'closed', 'withdrawn', 'open'], { error: 'is not a request state' }).optional(),
	collection: z.string().regex(/^[A-Z]{2,5}$/, 'must be a collection prefix').optional(),
	lab: z.string().uuid('must be a lab id').optional()
});

/** Requests within sight: a lab sees its own (drafts included), the facility sees all but other labs' drafts. */
export async function listRequests(sq: Sequelize, user: SessionUser, q: z.infer<typeof listRequestsQuery> = {}) {
	const where: string[] = [];
	const rep: Record<string, unknown> = {};
	const lab = labFilter(user);
	if (lab) {
		where.push('r.lab_id = :scopeLab');
		rep.scopeLab = lab;
	} else where.push(`r.state <> 'draft'`);
	if (q.state === 'open') where.push(`r.state IN ('submitted', 'in_review', 'granted')`);
	else if (q.state) {
		where.push('r.state = :state');
		rep.state = q.state;
	}
	if (q.collection) {
		where.push('c.prefix = :prefix');
		rep.prefix = q.collection;
	}
	if (q.lab) {
		where.push('r.lab_id = :lab');
		rep.lab = q.lab;
	}
	const rows = await sq.query<RequestRow>(`${REQUEST_SELECT} WHERE ${where.join(' AND ')} ORDER BY coalesce(r.submitted_at, r.created_at) DESC LIMIT 500`, {
		type: QueryTypes.SELECT, replacements: rep
	});
	return rows.map(requestView);
}

export async function getRequest(sq: Sequelize, user: SessionUser, id: string) {
	const r = await loadRequest(sq, user, id);
	if (r.state === 'draft' && user.role !== 'lab_member') throw new ApiProblem(404, 'not_found', 'No such allocation request is visible to you.');
	const items = await sq.query<{ code: string; mass_ug: number; state: string; set_aside_ug: number }>(
		`SELECT i.code, i.mass_ug, i.state, ai.mass_ug AS set_aside_ug FROM allocation_items ai JOIN items i ON i.id = ai.item_id WHERE ai.request_id = :id ORDER BY i.code`,
		{ type: QueryTypes.SELECT, replacements: { id: r.id } }
	);
	const transfers = await sq.query<{ id: string; number: number; direction: string; state: string }>(
		`SELECT id, number, direction, state FROM transfers WHERE request_id = :id ORDER BY number`,
		{ type: QueryTypes.SELECT, replacements: { id: r.id } }
	);
	const usage = await sq.query<{ code: string; allocated_ug: number; consumed_ug: number; returned_ug: number; lost_ug: number; gap_ug: number; tolerance_ug: number; gap_flagged: boolean; results_summary: string; submitted_at: Date }>(
		`SELECT i.code, u.allocated_ug, u.consumed_ug, u.returned_ug, u.lost_ug, u.gap_ug, u.tolerance_ug, u.gap_flagged, u.results_summary, u.submitted_at
		 FROM usage_reports u JOIN items i ON i.id = u.item_id WHERE u.request_id = :id ORDER BY i.code`,
		{ type: QueryTypes.SELECT, replacements: { id: r.id } }
	);
	let budget: Awaited<ReturnType<typeof grantableUg>> | null = null;
	if (user.role !== 'lab_member' && ['submitted', 'in_review'].includes(r.state)) {
		budget = await sq.transaction((t) => grantableUg(sq, t, r.collection_id));
	}
	return {
		request: requestView(r),
		items: items.map((i) => ({ code: i.code, massUg: i.mass_ug, state: i.state, setAsideUg: i.set_aside_ug })),
		transfers: transfers.map((x) => ({ id: x.id, number: `CT-${String(x.number).padStart(4, '0')}`, direction: x.direction, state: x.state })),
		usage: usage.map((u) => ({ code: u.code, allocatedUg: u.allocated_ug, consumedUg: u.consumed_ug, returnedUg: u.returned_ug, lostUg: u.lost_ug, gapUg: u.gap_ug, toleranceUg: u.tolerance_ug, gapFlagged: u.gap_flagged, resultsSummary: u.results_summary, submittedAt: u.submitted_at })),
		budget
	};
}
