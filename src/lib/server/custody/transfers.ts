import { z } from 'zod';
import { createHash } from 'node:crypto';
import canonicalize from 'canonicalize';
import { QueryTypes, type Sequelize, type Transaction } from 'sequelize';
import { ApiProblem } from '../api';
import { appendTrail, actorOf } from '../trail';
import { verifyPassword } from '../auth/password';
import { ROLE_LABELS, type SessionUser } from '../auth/types';
import { canSeeLab, labFilter } from '../auth/scope';
import { codeOrProblem } from '../registry/common';
import { formatMg } from '../../domain/mass';
import { conflict, forbid, idOf, MEANING_LABELS, note, notify, recipients, requestNumber, transferNumber, type Meaning } from './common';
import { closeIfSettled } from './usage';

export const USAGE_REPORT_DAYS = 90;

export const COOLANTS = {
	none: 'None (ambient)',
	cold_packs: 'Cold packs',
	dry_ice: 'Dry ice (solid CO₂)',
	dry_shipper: 'Liquid-nitrogen dry shipper'
} as const;

export const prepareInput = z.strictObject({
	requestId: z.string({ error: 'must be a request id' }).uuid('must be a request id').optional(),
	itemCodes: z.array(z.string({ error: 'must be an item code' }), { error: 'must be a list of item codes' }).min(1, 'name at least one item').max(100, 'at most 100 items per transfer').optional(),
	container: note(200).min(1, 'is required: describe the container'),
	seal: note(120).default(''),
	atmosphere: note(80).default(''),
	temperature: note(80).default(''),
	coolant: z.enum(['none', 'cold_packs', 'dry_ice', 'dry_shipper'], { error: 'must be none, cold_packs, dry_ice or dry_shipper' }).default('none'),
	carrier: note(120).default(''),
	trackingRef: note(120).default(''),
	expectedArrival: z.string({ error: 'must be a date' }).regex(/^\d{4}-\d{2}-\d{2}$/, 'must be a date as YYYY-MM-DD').optional(),
	note: note(2000).default('')
});

export const signInput = z.strictObject({
	meaning: z.enum(['dispatched', 'received_intact', 'received_damaged', 'refused', 'returned_to_sender'], { error: 'must be dispatched, received_intact, received_damaged, refused or returned_to_sender' }),
	password: z.string({ error: 'is required: re-enter your password to sign' }).min(1, 'is required: re-enter your password to sign').max(1024),
	note: note(2000).default('')
});

interface TransferRow {
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
	coolant: keyof typeof COOLANTS;
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

const TRANSFER_SELECT = `
	SELECT x.*, to_char(x.expected_arrival, 'YYYY-MM-DD') AS expected_arrival, r.number AS request_number,
	       fl.name AS from_name, tl.name AS to_name, p.name AS preparer_name
	FROM transfers x LEFT JOIN allocation_requests r ON r.id = x.request_id
	LEFT JOIN labs fl ON fl.id = x.from_lab_id LEFT JOIN labs tl ON tl.id = x.to_lab_id
	JOIN users p ON p.id = x.prepared_by`;

/** The lab on the other side of a transfer from the facility. */
const labOf = (x: Pick<TransferRow, 'from_lab_id' | 'to_lab_id'>) => x.to_lab_id ?? x.from_lab_id;

async function loadTransfer(sq: Sequelize, user: SessionUser, id: string, t?: Transaction, lock = false) {
	const rows = await sq.query<TransferRow>(`${TRANSFER_SELECT} WHERE x.id = :id${lock ? ' FOR UPDATE OF x' : ''}`, {
		type: QueryTypes.SELECT, replacements: { id: idOf(id, 'transfer') }, transaction: t
	});
	const x = rows[0];
	if (!x || !canSeeLab(user, labOf(x))) throw new ApiProblem(404, 'not_found', 'No such transfer is visible to you.');
	return x;
}

async function transferItems(sq: Sequelize, id: string, t?: Transaction) {
	return sq.query<{ id: string; code: string; mass_ug: number; state: string; holder_lab_id: string | null; u: number | null }>(
		`SELECT i.id, i.code, ti.mass_ug, i.state, i.holder_lab_id, i.mass_u_ug AS u FROM transfer_items ti JOIN items i ON i.id = ti.item_id WHERE ti.transfer_id = :id ORDER BY i.code`,
		{ type: QueryTypes.SELECT, replacements: { id }, transaction: t }
	);
}

/**
 * The transfer's manifest as RFC 8785 canonical JSON: what each signature is bound to
 * (21 CFR Part 11 §11.70, signature/record linking). Masses are those recorded at preparation.
 */
export function manifestOf(x: TransferRow, items: { code: string; mass_ug: number }[]): string {
	const text = canonicalize({
		transfer: transferNumber(x.number),
		direction: x.direction,
		request: x.request_number === null ? null : requestNumber(x.request_number),
		from: x.from_lab_id === null ? { facility: true } : { labId: x.from_lab_id },
		to: x.to_lab_id === null ? { facility: true } : { labId: x.to_lab_id },
		items: items.map((i) => ({ code: i.code, massUg: Number(i.mass_ug) })),
		packaging: { container: x.container, seal: x.seal, atmosphere: x.atmosphere, temperature: x.temperature, coolant: x.coolant },
		shipping: { carrier: x.carrier, trackingRef: x.tracking_ref, expectedArrival: x.expected_arrival }
	});
	if (!text) throw new Error('manifest cannot be canonicalized');
	return text;
}

export const sha256 = (s: string) => createHash('sha256').update(s).digest('hex');

export function transferView(x: TransferRow) {
	return {
		id: x.id,
		number: transferNumber(x.number),
		direction: x.direction,
		request: x.request_id ? { id: x.request_id, number: requestNumber(x.request_number!) } : null,
		from: x.from_lab_id ? { labId: x.from_lab_id, name: x.from_name } : { labId: null, name: 'Brightwater Curation Facility' },
		to: x.to_lab_id ? { labId: x.to_lab_id, name: x.to_name } : { labId: null, name: 'Brightwater Curation Facility' },
		state: x.state,
		container: x.container,
		seal: x.seal,
		atmosphere: x.atmosphere,
		temperature: x.temperature,
		coolant: x.coolant,
		coolantLabel: COOLANTS[x.coolant],
		carrier: x.carrier,
		trackingRef: x.tracking_ref,
		expectedArrival: x.expected_arrival,
		note: x.note,
		preparedBy: x.preparer_name,
		refusedReturnedAt: x.refused_returned_at,
		createdAt: x.created_at
	};
}

/** Prepares an outbound transfer for a granted request (curator) or a return of material on loan (its lab). */
export async function prepareTransfer(sq: Sequelize, user: SessionUser, input: z.infer<typeof prepareInput>) {
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
			`INSERT INTO transfers (direction, request_id, from_lab_id, to_lab_id, container, seal, atmosphere, temperature, coolant, carrier, tracking_ref, expected_arrival, note, prepared_by)
			 VALUES (:direction, :request, :from, :to, :container, :seal, :atmosphere, :temperature, :coolant, :carrier, :tracking, :arrival, :note, :by) RETURNING id, number`,
			{
				type: QueryTypes.SELECT, transaction: t,
				replacements: {
					direction, request: requestId, from: direction === 'return' ? labId : null, to: direction === 'outbound' ? labId : null,
					container: input.container, seal: input.seal, atmosphere: input.atmosphere, temperature: input.temperature, coolant: input.coolant,
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
			dispatched: [`${num} has been dispatched${x.carrier ? ` with ${x.carrier}` : ''}${x.tracking_ref ? ` (tracking ${x.tracking_ref})` : ''}.`, 'It awaits your signature of receipt when it arrives.'],
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
		transfer: transferView(x),
		items: items.map((i) => ({ code: i.code, massUg: Number(i.mass_ug), state: i.state, expandedUg: i.u === null ? null : 2 * i.u })),
		manifestSha256: hash,
		signatures: sigs.map((s) => ({
			id: s.id, printedName: s.printed_name, email: s.email, role: s.signer_role, roleLabel: ROLE_LABELS[s.signer_role as keyof typeof ROLE_LABELS] ?? s.signer_role,
			meaning: s.meaning, meaningLabel: MEANING_LABELS[s.meaning], note: s.note, signedAt: new Date(s.signed_at).toISOString(),
			manifestSha256: s.manifest_sha256, verifies: s.manifest_sha256 === hash
		}))
	};
}

export const listTransfersQuery = z.strictObject({
	state: z.enum(['prepared', 'dispatched', 'received', 'refused', 'cancelled'], { error: 'is not a transfer state' }).optional(),
	direction: z.enum(['outbound', 'return'], { error: 'must be outbound or return' }).optional()
});

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
	return rows.map((r) => ({ ...transferView(r), itemCount: r.items, massUg: Number(r.mass), massText: formatMg(Number(r.mass)) }));
}
