/** Reading transfers: the row, its items, the view the API and pages show, one transfer and the list. */
import { QueryTypes, type Sequelize, type Transaction } from 'sequelize';
import { ApiProblem } from '../api';
import { ROLE_LABELS, type SessionUser } from '../auth/types';
import { canSeeLab, labFilter } from '../auth/scope';
import { formatMg } from '../../domain/mass';
import { facilityName } from '../facility';
import { idOf, MEANING_LABELS, requestNumber, transferNumber, type Meaning } from './common';
import { COOLANTS, dryIceText, type Coolant, type listTransfersQuery } from './transfer-input';
import { manifestOf, sha256 } from './manifest';
import type { z } from 'zod';

export interface TransferRow {
	id: string;
	number: number;
	direction: 'outbound' | 'return';
	request_id: string | null;
	request_number: number | null;
	from_lab_id: string | null;
	from_name: string | null;
	to_lab_id: string | null;
	to_name: string | null;
	state: string;
	container: string;
	seal: string;
	atmosphere: string;
	temperature: string;
	coolant: Coolant;
	/** net mass of dry ice in whole grams (migration 0091), null without dry ice */
	dry_ice_net_g: number | null;
	/** how the manifest is built (migration 0090; see manifest.ts) */
	manifest_version: number;
	carrier: string;
	tracking_ref: string;
	expected_arrival: string | null;
	note: string;
	prepared_by: string;
	preparer_name: string;
	refused_returned_at: Date | null;
	created_at: Date;
	updated_at: Date;
}

export const TRANSFER_SELECT = `
	SELECT x.*, to_char(x.expected_arrival, 'YYYY-MM-DD') AS expected_arrival, r.number AS request_number,
	       fl.name AS from_name, tl.name AS to_name, p.name AS preparer_name
	FROM transfers x LEFT JOIN allocation_requests r ON r.id = x.request_id
	LEFT JOIN labs fl ON fl.id = x.from_lab_id LEFT JOIN labs tl ON tl.id = x.to_lab_id
	JOIN users p ON p.id = x.prepared_by`;

/** The lab on the other side of a transfer from the facility. */
export const labOf = (x: Pick<TransferRow, 'from_lab_id' | 'to_lab_id'>) => x.to_lab_id ?? x.from_lab_id;

export async function loadTransfer(sq: Sequelize, user: SessionUser, id: string, t?: Transaction, lock = false) {
	const rows = await sq.query<TransferRow>(`${TRANSFER_SELECT} WHERE x.id = :id${lock ? ' FOR UPDATE OF x' : ''}`, {
		type: QueryTypes.SELECT, replacements: { id: idOf(id, 'transfer') }, transaction: t
	});
	const x = rows[0];
	if (!x || !canSeeLab(user, labOf(x))) throw new ApiProblem(404, 'not_found', 'No such transfer is visible to you.');
	return x;
}

export async function transferItems(sq: Sequelize, id: string, t?: Transaction) {
	return sq.query<{ id: string; code: string; mass_ug: number; state: string; holder_lab_id: string | null; u: number | null }>(
		`SELECT i.id, i.code, ti.mass_ug, i.state, i.holder_lab_id, i.mass_u_ug AS u FROM transfer_items ti JOIN items i ON i.id = ti.item_id WHERE ti.transfer_id = :id ORDER BY i.code`,
		{ type: QueryTypes.SELECT, replacements: { id }, transaction: t }
	);
}

/** What the API and pages show of a transfer; `facility` names the facility's side (the `facility.name` setting). */
export function transferView(x: TransferRow, facility: string) {
	return {
		id: x.id,
		number: transferNumber(x.number),
		direction: x.direction,
		request: x.request_id ? { id: x.request_id, number: requestNumber(x.request_number!) } : null,
		from: x.from_lab_id ? { labId: x.from_lab_id, name: x.from_name } : { labId: null, name: facility },
		to: x.to_lab_id ? { labId: x.to_lab_id, name: x.to_name } : { labId: null, name: facility },
		state: x.state,
		container: x.container,
		seal: x.seal,
		atmosphere: x.atmosphere,
		temperature: x.temperature,
		coolant: x.coolant,
		coolantLabel: COOLANTS[x.coolant],
		dryIceKg: x.dry_ice_net_g === null ? null : Number(x.dry_ice_net_g) / 1000,
		dryIceText: x.dry_ice_net_g === null ? null : dryIceText(Number(x.dry_ice_net_g)),
		carrier: x.carrier,
		trackingRef: x.tracking_ref,
		expectedArrival: x.expected_arrival,
		note: x.note,
		preparedBy: x.preparer_name,
		refusedReturnedAt: x.refused_returned_at,
		createdAt: x.created_at
	};
}

export async function getTransfer(sq: Sequelize, user: SessionUser, id: string) {
	const x = await loadTransfer(sq, user, id);
	const items = await transferItems(sq, x.id);
	const manifest = manifestOf(x, items);
	const hash = sha256(manifest);
	const sigs = await sq.query<{ id: string; printed_name: string; signer_role: string; meaning: Meaning; note: string; manifest_sha256: string; signed_at: Date; email: string }>(
		`SELECT s.id, s.printed_name, s.signer_role, s.meaning, s.note, s.manifest_sha256, s.signed_at, u.email FROM signatures s JOIN users u ON u.id = s.signer_id WHERE s.transfer_id = :id ORDER BY s.signed_at`,
		{ type: QueryTypes.SELECT, replacements: { id: x.id } }
	);
	return {
		transfer: transferView(x, await facilityName(sq)),
		items: items.map((i) => ({ code: i.code, massUg: Number(i.mass_ug), state: i.state, expandedUg: i.u === null ? null : 2 * i.u })),
		manifestSha256: hash,
		signatures: sigs.map((s) => ({
			id: s.id, printedName: s.printed_name, email: s.email, role: s.signer_role, roleLabel: ROLE_LABELS[s.signer_role as keyof typeof ROLE_LABELS] ?? s.signer_role,
			meaning: s.meaning, meaningLabel: MEANING_LABELS[s.meaning], note: s.note, signedAt: new Date(s.signed_at).toISOString(),
			manifestSha256: s.manifest_sha256, verifies: s.manifest_sha256 === hash
		}))
	};
}

export async function listTransfers(sq: Sequelize, user: SessionUser, q: z.infer<typeof listTransfersQuery> = {}) {
	const where: string[] = ['true'];
	const rep: Record<string, unknown> = {};
	const lab = labFilter(user);
	if (lab) {
		where.push('(x.to_lab_id = :lab OR x.from_lab_id = :lab)');
		rep.lab = lab;
	}
	if (q.state) { where.push('x.state = :state'); rep.state = q.state; }
	if (q.direction) { where.push('x.direction = :direction'); rep.direction = q.direction; }
	const rows = await sq.query<TransferRow & { items: number; mass: number }>(
		`${TRANSFER_SELECT.replace('SELECT x.*', 'SELECT x.*, (SELECT count(*)::int FROM transfer_items ti WHERE ti.transfer_id = x.id) AS items, (SELECT coalesce(sum(mass_ug), 0)::bigint FROM transfer_items ti WHERE ti.transfer_id = x.id) AS mass')}
		 WHERE ${where.join(' AND ')} ORDER BY x.number DESC LIMIT 500`,
		{ type: QueryTypes.SELECT, replacements: rep }
	);
	const facility = await facilityName(sq);
	return rows.map((r) => ({ ...transferView(r, facility), itemCount: r.items, massUg: Number(r.mass), massText: formatMg(Number(r.mass)) }));
}
