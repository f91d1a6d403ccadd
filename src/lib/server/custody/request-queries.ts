import { z } from 'zod';
import { QueryTypes, type Sequelize, type Transaction } from 'sequelize';
import { ApiProblem } from '../api';
import type { SessionUser } from '../auth/types';
import { labFilter, canSeeLab } from '../auth/scope';
import type { OfferConstraints } from '../../domain/offer';
import { idOf, requestNumber, REQUEST_STATE_LABELS, type RequestState } from './common';
import { listRequestsQuery } from './request-inputs';
import { grantableUg } from './request-budget';
export interface RequestRow {
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
	pieces: number;
	constraints: OfferConstraints;
	item_ids: string[];
	item_codes: string[];
}

const REQUEST_SELECT = `
	SELECT r.*, l.name AS lab_name, u.name AS requester_name, c.prefix, c.name AS collection_name, d.name AS decider_name,
	       ARRAY(SELECT x.code FROM unnest(r.item_ids) WITH ORDINALITY AS k(id, n) JOIN items x ON x.id = k.id ORDER BY k.n) AS item_codes
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
		pieces: r.pieces,
		constraints: r.constraints,
		itemCodes: r.item_codes,
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

/** One request within the user's sight (404 otherwise), optionally locked for update. */
export async function loadRequest(sq: Sequelize, user: SessionUser, id: string, t?: Transaction, lock = false): Promise<RequestRow> {
	const rows = await sq.query<RequestRow>(`${REQUEST_SELECT} WHERE r.id = :id${lock ? ' FOR UPDATE OF r' : ''}`, {
		type: QueryTypes.SELECT, replacements: { id: idOf(id, 'request') }, transaction: t
	});
	const r = rows[0];
	if (!r || !canSeeLab(user, r.lab_id)) throw new ApiProblem(404, 'not_found', 'No such allocation request is visible to you.');
	return r;
}

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
