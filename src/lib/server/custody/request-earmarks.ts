import { z } from 'zod';
import { QueryTypes, type Sequelize, type Transaction } from 'sequelize';
import { ApiProblem } from '../api';
import { appendTrail, actorOf } from '../trail';
import type { SessionUser } from '../auth/types';
import { findItem } from '../registry/common';
import { formatMg } from '../../domain/mass';
import { conflict, requestNumber, REQUEST_STATE_LABELS } from './common';
import { earmarkInput } from './request-inputs';
import { loadRequest } from './request-queries';
/** Earmarked aliquots of a request go back to storage (withdrawal). */
export async function releaseEarmarks(sq: Sequelize, t: Transaction, user: SessionUser, requestId: string) {
	const items = await sq.query<{ id: string; code: string }>(
		`UPDATE items SET state = 'stored', updated_at = now() WHERE id IN (SELECT item_id FROM allocation_items WHERE request_id = :id) AND state = 'earmarked' RETURNING id, code`,
		{ type: QueryTypes.SELECT, replacements: { id: requestId }, transaction: t }
	);
	for (const it of items) {
		await appendTrail(sq, t, { actor: actorOf(user), action: 'item.earmark_released', subjectType: 'item', subjectId: it.code, before: { state: 'earmarked' }, after: { state: 'stored', requestId } });
	}
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
