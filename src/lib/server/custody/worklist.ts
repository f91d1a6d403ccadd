import { QueryTypes, type Sequelize } from 'sequelize';
import type { SessionUser } from '../auth/types';
import { requestNumber, transferNumber } from './common';
import { itemPath } from '../../domain/codes';

export interface WorkItem {
	href: string;
	title: string;
	detail: string;
	since: string | null;
}
export interface WorkGroup {
	key: string;
	title: string;
	items: WorkItem[];
}

const iso = (d: Date | string | null) => (d ? new Date(d).toISOString() : null);

/** What waits on this person: a curator's queue, or a lab's requests, loans, signatures and reports. */
export async function worklist(sq: Sequelize, user: SessionUser): Promise<WorkGroup[]> {
	const q = <T extends object>(sql: string, rep: Record<string, unknown> = {}) => sq.query<T>(sql, { type: QueryTypes.SELECT, replacements: rep });
	type Req = { id: string; number: number; lab: string; prefix: string; mass_ug: number; at: Date | null };
	type Tr = { id: string; number: number; other: string | null; at: Date };
	if (user.role === 'lab_member') {
		const lab = user.labId;
		const mine = await q<Req & { state: string }>(
			`SELECT r.id, r.number, l.name AS lab, c.prefix, r.mass_ug, r.state, coalesce(r.submitted_at, r.created_at) AS at FROM allocation_requests r
			 JOIN labs l ON l.id = r.lab_id JOIN collections c ON c.id = r.collection_id WHERE r.lab_id = :lab AND r.state IN ('draft', 'submitted', 'in_review', 'granted') ORDER BY at`, { lab });
		const toSign = await q<Tr>(
			`SELECT x.id, x.number, NULL AS other, x.updated_at AS at FROM transfers x WHERE (x.to_lab_id = :lab AND x.direction = 'outbound' AND x.state = 'dispatched')
			    OR (x.from_lab_id = :lab AND x.direction = 'return' AND x.state = 'prepared') ORDER BY x.number`, { lab });
		const onLoan = await q<{ code: string; mass_ug: number; at: Date }>(`SELECT code, mass_ug, updated_at AS at FROM items WHERE holder_lab_id = :lab AND state = 'on_loan' ORDER BY code`, { lab });
		const reports = await q<Req & { due: Date }>(
			`SELECT r.id, r.number, '' AS lab, c.prefix, r.granted_ug AS mass_ug, r.usage_due_at AS due, r.fulfilled_at AS at FROM allocation_requests r JOIN collections c ON c.id = r.collection_id
			 WHERE r.lab_id = :lab AND r.state = 'fulfilled' ORDER BY r.usage_due_at`, { lab });
		return [
			{ key: 'sign', title: 'Waiting for your signature', items: toSign.map((x) => ({ href: `/transfers/${x.id}`, title: transferNumber(x.number), detail: 'sign receipt or dispatch', since: iso(x.at) })) },
			{ key: 'usage', title: 'Usage reports to file', items: reports.map((r) => ({ href: `/requests/${r.id}`, title: requestNumber(r.number), detail: `${r.prefix} · due ${iso(r.due)?.slice(0, 10) ?? '—'}${r.due && new Date(r.due) < new Date() ? ' · OVERDUE' : ''}`, since: iso(r.at) })) },
			{ key: 'requests', title: 'Your open requests', items: mine.map((r) => ({ href: `/requests/${r.id}`, title: requestNumber(r.number), detail: `${r.prefix} · ${r.state.replace('_', ' ')}`, since: iso(r.at) })) },
			{ key: 'loan', title: 'Material on loan to your lab', items: onLoan.map((i) => ({ href: `/items/${itemPath(i.code)}`, title: i.code, detail: `${(i.mass_ug / 1000).toFixed(3)} mg`, since: iso(i.at) })) }
		];
	}
	const review = await q<Req>(
		`SELECT r.id, r.number, l.name AS lab, c.prefix, r.mass_ug, r.submitted_at AS at FROM allocation_requests r JOIN labs l ON l.id = r.lab_id JOIN collections c ON c.id = r.collection_id
		 WHERE r.state IN ('submitted', 'in_review') ORDER BY r.submitted_at`);
	const fulfil = await q<Req>(
		`SELECT r.id, r.number, l.name AS lab, c.prefix, r.granted_ug AS mass_ug, r.decided_at AS at FROM allocation_requests r JOIN labs l ON l.id = r.lab_id JOIN collections c ON c.id = r.collection_id
		 WHERE r.state = 'granted' AND NOT EXISTS (SELECT 1 FROM transfers x WHERE x.request_id = r.id AND x.state IN ('prepared', 'dispatched')) ORDER BY r.decided_at`);
	const dispatch = await q<Tr>(`SELECT x.id, x.number, l.name AS other, x.created_at AS at FROM transfers x JOIN labs l ON l.id = x.to_lab_id WHERE x.direction = 'outbound' AND x.state = 'prepared' ORDER BY x.number`);
	const unsigned = await q<Tr>(`SELECT x.id, x.number, l.name AS other, x.updated_at AS at FROM transfers x JOIN labs l ON l.id = coalesce(x.to_lab_id, x.from_lab_id) WHERE x.state = 'dispatched' ORDER BY x.updated_at`);
	const refused = await q<Tr>(`SELECT x.id, x.number, l.name AS other, x.updated_at AS at FROM transfers x JOIN labs l ON l.id = coalesce(x.to_lab_id, x.from_lab_id) WHERE x.state = 'refused' AND x.refused_returned_at IS NULL`);
	const overdue = await q<Req>(
		`SELECT r.id, r.number, l.name AS lab, c.prefix, r.granted_ug AS mass_ug, r.usage_due_at AS at FROM allocation_requests r JOIN labs l ON l.id = r.lab_id JOIN collections c ON c.id = r.collection_id
		 WHERE r.state = 'fulfilled' AND r.usage_due_at < now() ORDER BY r.usage_due_at`);
	const gaps = await q<{ id: string; number: number; code: string; gap_ug: number; at: Date }>(
		`SELECT r.id, r.number, i.code, u.gap_ug, u.submitted_at AS at FROM usage_reports u JOIN allocation_requests r ON r.id = u.request_id JOIN items i ON i.id = u.item_id WHERE u.gap_flagged ORDER BY u.submitted_at DESC LIMIT 50`);
	const mg = (ug: number | null) => (ug === null ? '—' : `${(Number(ug) / 1000).toFixed(3)} mg`);
	return [
		{ key: 'review', title: 'Requests to review', items: review.map((r) => ({ href: `/requests/${r.id}`, title: requestNumber(r.number), detail: `${r.lab} · ${r.prefix} · ${mg(r.mass_ug)}`, since: iso(r.at) })) },
		{ key: 'fulfil', title: 'Granted, to set aside and ship', items: fulfil.map((r) => ({ href: `/requests/${r.id}`, title: requestNumber(r.number), detail: `${r.lab} · ${r.prefix} · ${mg(r.mass_ug)}`, since: iso(r.at) })) },
		{ key: 'dispatch', title: 'Transfers to dispatch', items: dispatch.map((x) => ({ href: `/transfers/${x.id}`, title: transferNumber(x.number), detail: `to ${x.other}`, since: iso(x.at) })) },
		{ key: 'unsigned', title: 'Receipts not yet signed', items: unsigned.map((x) => ({ href: `/transfers/${x.id}`, title: transferNumber(x.number), detail: `${x.other}`, since: iso(x.at) })) },
		{ key: 'refused', title: 'Refused shipments on their way back', items: refused.map((x) => ({ href: `/transfers/${x.id}`, title: transferNumber(x.number), detail: `${x.other}`, since: iso(x.at) })) },
		{ key: 'overdue', title: 'Usage reports overdue', items: overdue.map((r) => ({ href: `/requests/${r.id}`, title: requestNumber(r.number), detail: `${r.lab} · due ${iso(r.at)?.slice(0, 10)}`, since: iso(r.at) })) },
		{ key: 'gaps', title: 'Usage that does not close (flagged)', items: gaps.map((g) => ({ href: `/requests/${g.id}`, title: `${requestNumber(g.number)} · ${g.code}`, detail: `${g.gap_ug} µg unaccounted for`, since: iso(g.at) })) }
	];
}
