/** Preparing a transfer: an outbound shipment for a granted request, or a lab's return. */
import { QueryTypes, type Sequelize } from 'sequelize';
import { ApiProblem } from '../api';
import { appendTrail, actorOf } from '../trail';
import type { SessionUser } from '../auth/types';
import { codeOrProblem } from '../registry/common';
import { conflict, requestNumber, transferNumber } from './common';
import type { PrepareInput } from './transfer-input';

/** Prepares an outbound transfer for a granted request (curator) or a return of material on loan (its lab). */
export async function prepareTransfer(sq: Sequelize, user: SessionUser, input: PrepareInput) {
	return sq.transaction(async (t) => {
		let items: { id: string; code: string; mass_ug: number }[];
		let requestId: string | null = null;
		let direction: 'outbound' | 'return';
		let labId: string;
		if (user.role === 'lab_member') {
			direction = 'return';
			labId = user.labId!;
			if (!input.itemCodes) throw new ApiProblem(422, 'invalid_input', 'itemCodes: name the items you return.', { itemCodes: 'is required for a return' });
			const codes = input.itemCodes.map(codeOrProblem);
			items = await sq.query(
				`SELECT i.id, i.code, i.mass_ug, i.state, i.holder_lab_id, ai.request_id,
				   EXISTS (SELECT 1 FROM usage_reports u WHERE u.item_id = i.id) AS reported,
				   EXISTS (SELECT 1 FROM transfer_items ti JOIN transfers x ON x.id = ti.transfer_id WHERE ti.item_id = i.id AND x.direction = 'return' AND x.state IN ('prepared', 'dispatched')) AS returning
				 FROM items i LEFT JOIN allocation_items ai ON ai.item_id = i.id WHERE i.code IN (:codes) FOR UPDATE OF i`,
				{ type: QueryTypes.SELECT, replacements: { codes }, transaction: t }
			);
			for (const c of codes) {
				const it = (items as unknown as { code: string; state: string; holder_lab_id: string | null; reported: boolean; returning: boolean; mass_ug: number }[]).find((i) => i.code === c);
				if (!it || it.holder_lab_id !== labId) throw new ApiProblem(404, 'not_found', `No item ${c} is on loan to your lab.`);
				if (it.state !== 'on_loan') conflict(`${c} is ${it.state.replace('_', ' ')}; only material on loan can be returned.`);
				if (!it.reported) conflict(`${c}: report its usage first, so the returned mass is on record.`);
				if (it.returning) conflict(`${c} is already on a return transfer.`);
				if (Number(it.mass_ug) === 0) conflict(`${c} was used up entirely; there is nothing to return.`);
			}
			requestId = (items[0] as unknown as { request_id: string | null }).request_id;
		} else {
			direction = 'outbound';
			if (!input.requestId) throw new ApiProblem(422, 'invalid_input', 'requestId: an outbound transfer fulfils a granted request.', { requestId: 'is required' });
			const [r] = await sq.query<{ id: string; lab_id: string; state: string; number: number }>(
				'SELECT id, lab_id, state, number FROM allocation_requests WHERE id = :id FOR UPDATE',
				{ type: QueryTypes.SELECT, replacements: { id: input.requestId }, transaction: t }
			);
			if (!r) throw new ApiProblem(404, 'not_found', 'No such allocation request.');
			if (r.state !== 'granted') conflict(`${requestNumber(r.number)} is ${r.state.replace('_', ' ')}; ship only for a granted request.`);
			requestId = r.id;
			labId = r.lab_id;
			items = await sq.query(
				`SELECT i.id, i.code, i.mass_ug FROM allocation_items ai JOIN items i ON i.id = ai.item_id
				 WHERE ai.request_id = :r AND i.state = 'earmarked'
				   AND NOT EXISTS (SELECT 1 FROM transfer_items ti JOIN transfers x ON x.id = ti.transfer_id WHERE ti.item_id = i.id AND x.state IN ('prepared', 'dispatched'))
				 ORDER BY i.code FOR UPDATE OF i`,
				{ type: QueryTypes.SELECT, replacements: { r: r.id }, transaction: t }
			);
			if (input.itemCodes) {
				const want = new Set(input.itemCodes.map(codeOrProblem));
				items = items.filter((i) => want.has(i.code));
				if (items.length !== want.size) throw new ApiProblem(422, 'invalid_input', 'itemCodes: ship only aliquots set aside for this request and not yet on a transfer.', { itemCodes: 'not all are set aside for this request' });
			}
			if (!items.length) conflict(`${requestNumber(r.number)} has no aliquot set aside that is not already on a transfer: set one aside first.`);
		}
		const [x] = await sq.query<{ id: string; number: number }>(
			`INSERT INTO transfers (direction, request_id, from_lab_id, to_lab_id, container, seal, atmosphere, temperature, coolant, dry_ice_net_g, carrier, tracking_ref, expected_arrival, note, prepared_by)
			 VALUES (:direction, :request, :from, :to, :container, :seal, :atmosphere, :temperature, :coolant, :dryIce, :carrier, :tracking, :arrival, :note, :by) RETURNING id, number`,
			{
				type: QueryTypes.SELECT, transaction: t,
				replacements: {
					direction, request: requestId, from: direction === 'return' ? labId : null, to: direction === 'outbound' ? labId : null,
					container: input.container, seal: input.seal, atmosphere: input.atmosphere, temperature: input.temperature, coolant: input.coolant, dryIce: input.dryIceNetG,
					carrier: input.carrier, tracking: input.trackingRef, arrival: input.expectedArrival ?? null, note: input.note, by: user.id
				}
			}
		);
		for (const it of items) {
			await sq.query('INSERT INTO transfer_items (transfer_id, item_id, mass_ug) VALUES (:x, :i, :m)', { replacements: { x: x.id, i: it.id, m: it.mass_ug }, transaction: t });
		}
		await appendTrail(sq, t, {
			actor: actorOf(user), action: 'transfer.prepared', subjectType: 'transfer', subjectId: x.id,
			after: { number: transferNumber(x.number), direction, items: items.map((i) => ({ code: i.code, massUg: i.mass_ug })), ...input }
		});
		return x.id;
	});
}
