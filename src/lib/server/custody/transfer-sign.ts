/** Signing a transfer (custody and item states move only here) and cancelling one not yet dispatched. */
import type { z } from 'zod';
import { QueryTypes, type Sequelize } from 'sequelize';
import { ApiProblem } from '../api';
import { appendTrail, actorOf } from '../trail';
import { verifyPassword } from '../auth/password';
import type { SessionUser } from '../auth/types';
import { coolantCaution, cautionText } from '../../cautions';
import { conflict, forbid, MEANING_LABELS, notify, recipients, transferNumber, type Meaning } from './common';
import { closeIfSettled } from './usage';
import { dryIceText, type signInput } from './transfer-input';
import { manifestOf, sha256 } from './manifest';
import { labOf, loadTransfer, transferItems, type TransferRow } from './transfer-rows';

export const USAGE_REPORT_DAYS = 90;

/** The coolant's caution for the "dispatched" message: the same words as the transfer page and the receipt. */
function dispatchCaution(x: TransferRow): string[] {
	const c = coolantCaution(x.coolant);
	if (!c) return [];
	const mass = x.dry_ice_net_g === null ? [] : [`Dry ice, net mass: ${dryIceText(Number(x.dry_ice_net_g))}.`];
	return ['', `Packed with ${x.coolant === 'dry_ice' ? 'dry ice' : 'a liquid-nitrogen dry shipper'}.`, ...mass, '', ...cautionText(c)];
}

/** Who may give which signature on a transfer in its current state. */
function checkSigner(user: SessionUser, x: TransferRow, meaning: Meaning) {
	const facilitySide = user.role === 'curator' || user.role === 'admin';
	const labSide = user.role === 'lab_member' && user.labId === labOf(x);
	const senderSide = x.direction === 'outbound' ? facilitySide : labSide;
	const receiverSide = x.direction === 'outbound' ? labSide : facilitySide;
	const need: Record<Meaning, { state: string; side: boolean; who: string }> = {
		dispatched: { state: 'prepared', side: senderSide, who: 'the sender' },
		received_intact: { state: 'dispatched', side: receiverSide, who: 'the receiving side' },
		received_damaged: { state: 'dispatched', side: receiverSide, who: 'the receiving side' },
		refused: { state: 'dispatched', side: receiverSide, who: 'the receiving side' },
		returned_to_sender: { state: 'refused', side: senderSide, who: 'the sender' }
	};
	const rule = need[meaning];
	if (!rule.side) forbid(`“${MEANING_LABELS[meaning]}” is signed by ${rule.who} of ${transferNumber(x.number)}.`);
	if (x.state !== rule.state || (meaning === 'returned_to_sender' && x.refused_returned_at)) {
		conflict(`${transferNumber(x.number)} is ${x.state}; “${MEANING_LABELS[meaning]}” cannot be signed now${x.state === 'received' ? ' (its receipt is signed already)' : ''}.`);
	}
}

/**
 * Signs a transfer. The signer re-enters their password (21 CFR Part 11 §11.200: two distinct
 * components at the first signing of a session); the signature records signer, printed name, role,
 * meaning, UTC time and the SHA-256 of the canonical manifest (§11.50, §11.70). Custody and item
 * states move only here.
 */
export async function signTransfer(sq: Sequelize, user: SessionUser, id: string, input: z.infer<typeof signInput>) {
	const [{ password_hash }] = await sq.query<{ password_hash: string | null }>('SELECT password_hash FROM users WHERE id = :id', { type: QueryTypes.SELECT, replacements: { id: user.id } });
	if (!(await verifyPassword(password_hash, input.password))) {
		throw new ApiProblem(422, 'signature_refused', 'password: that is not your password; nothing was signed.', { password: 'is not right' });
	}
	if ((input.meaning === 'refused' || input.meaning === 'received_damaged') && input.note.length < 5) {
		throw new ApiProblem(422, 'invalid_input', `note: say what is wrong (at least 5 characters) when signing “${MEANING_LABELS[input.meaning]}”.`, { note: 'is required' });
	}
	return sq.transaction(async (t) => {
		const x = await loadTransfer(sq, user, id, t, true);
		checkSigner(user, x, input.meaning);
		const items = await transferItems(sq, x.id, t);
		const manifestHash = sha256(manifestOf(x, items));
		const [sig] = await sq.query<{ id: string; signed_at: Date }>(
			`INSERT INTO signatures (transfer_id, signer_id, printed_name, signer_role, signer_lab_id, meaning, note, manifest_sha256)
			 VALUES (:x, :u, :name, :role, :lab, :meaning, :note, :hash) RETURNING id, signed_at`,
			{ type: QueryTypes.SELECT, transaction: t, replacements: { x: x.id, u: user.id, name: user.name, role: user.role, lab: user.labId, meaning: input.meaning, note: input.note, hash: manifestHash } }
		);
		const ids = items.map((i) => i.id);
		const move = async (state: string, holder: string | null) => {
			await sq.query('UPDATE items SET state = :state, holder_lab_id = :holder, updated_at = now() WHERE id IN (:ids)', { replacements: { state, holder, ids }, transaction: t });
			for (const it of items) {
				await appendTrail(sq, t, {
					actor: actorOf(user), action: 'item.custody_changed', subjectType: 'item', subjectId: it.code,
					before: { state: it.state, holderLabId: it.holder_lab_id }, after: { state, holderLabId: holder, transfer: transferNumber(x.number), signature: sig.id }
				});
			}
		};
		const lab = labOf(x)!;
		let newState = x.state;
		if (input.meaning === 'dispatched') {
			newState = 'dispatched';
			await move('in_transit', x.direction === 'outbound' ? null : lab);
		} else if (input.meaning === 'received_intact' || input.meaning === 'received_damaged') {
			newState = 'received';
			if (x.direction === 'outbound') {
				await move('on_loan', lab);
				if (x.request_id) {
					await sq.query(
						`UPDATE allocation_requests SET state = 'fulfilled', fulfilled_at = now(), usage_due_at = now() + make_interval(days => :days), updated_at = now()
						 WHERE id = :id AND state = 'granted'
						   AND NOT EXISTS (SELECT 1 FROM allocation_items ai JOIN items i ON i.id = ai.item_id WHERE ai.request_id = :id AND i.state <> 'on_loan')`,
						{ replacements: { id: x.request_id, days: USAGE_REPORT_DAYS }, transaction: t }
					);
				}
			} else {
				await move('stored', null);
				if (x.request_id) await closeIfSettled(sq, t, user, x.request_id);
			}
		} else if (input.meaning === 'refused') {
			newState = 'refused';
		} else if (input.meaning === 'returned_to_sender') {
			await move(x.direction === 'outbound' ? 'earmarked' : 'on_loan', x.direction === 'outbound' ? null : lab);
			await sq.query('UPDATE transfers SET refused_returned_at = now() WHERE id = :id', { replacements: { id: x.id }, transaction: t });
		}
		if (newState !== x.state) await sq.query('UPDATE transfers SET state = :s, updated_at = now() WHERE id = :id', { replacements: { s: newState, id: x.id }, transaction: t });
		await appendTrail(sq, t, {
			actor: actorOf(user), action: `transfer.signed.${input.meaning}`, subjectType: 'transfer', subjectId: x.id,
			before: { state: x.state }, after: { state: newState, signature: { id: sig.id, printedName: user.name, role: user.role, meaning: input.meaning, manifestSha256: manifestHash, note: input.note } }
		});
		// Tell the other side.
		const num = transferNumber(x.number);
		const labPeople = await recipients(sq, t, { roles: ['lab_member'], labId: lab });
		const curators = await recipients(sq, t, { roles: ['curator'] });
		const toOther = (x.direction === 'outbound') === (input.meaning === 'dispatched' || input.meaning === 'returned_to_sender') ? labPeople : curators;
		const lines: Record<Meaning, string[]> = {
			dispatched: [`${num} has been dispatched${x.carrier ? ` with ${x.carrier}` : ''}${x.tracking_ref ? ` (tracking ${x.tracking_ref})` : ''}.`, 'It awaits your signature of receipt when it arrives.', ...dispatchCaution(x)],
			received_intact: [`${num} was received intact by ${user.name}.`],
			received_damaged: [`${num} was received with damage noted by ${user.name}: ${input.note}`],
			refused: [`${num} was refused by ${user.name}: ${input.note}`, 'Record its return when it is back.'],
			returned_to_sender: [`The refused shipment ${num} is back with its sender.`]
		};
		await notify(sq, t, toOther, `transfer.${input.meaning}`, `${num}: ${MEANING_LABELS[input.meaning].toLowerCase()}`, lines[input.meaning], `/transfers/${x.id}`);
		return { signatureId: sig.id, manifestSha256: manifestHash, state: newState, massUg: items.reduce((s, i) => s + Number(i.mass_ug), 0) };
	});
}

export async function cancelTransfer(sq: Sequelize, user: SessionUser, id: string) {
	return sq.transaction(async (t) => {
		const x = await loadTransfer(sq, user, id, t, true);
		const mine = x.direction === 'outbound' ? user.role !== 'lab_member' : user.role === 'lab_member';
		if (!mine) forbid(`${transferNumber(x.number)} is cancelled by the side that prepared it.`);
		if (x.state !== 'prepared') conflict(`${transferNumber(x.number)} is ${x.state}; only a transfer not yet dispatched can be cancelled.`);
		await sq.query(`UPDATE transfers SET state = 'cancelled', updated_at = now() WHERE id = :id`, { replacements: { id: x.id }, transaction: t });
		await appendTrail(sq, t, { actor: actorOf(user), action: 'transfer.cancelled', subjectType: 'transfer', subjectId: x.id, before: { state: 'prepared' }, after: { state: 'cancelled' } });
	});
}
