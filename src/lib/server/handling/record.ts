import { z } from 'zod';
import { QueryTypes, type Sequelize, type Transaction } from 'sequelize';
import { ATMOSPHERES, ATMOSPHERE_LABELS } from '../../domain/exposure';
import { rulesOf } from '../../domain/handling';
import { ApiProblem } from '../api';
import { appendTrail } from '../trail';
import { codeOrProblem, shortText, trailActor, type Who } from '../registry/common';
import type { CollectionRow } from './rows';

// Recording a handling session: its input, checked whole against the collection's rules, and the
// one transaction that writes it with its items, contacts, blanks and trail event.

/** Sessions ending more than this far ahead of the server's clock are refused as mistyped. */
const FUTURE_SLACK_MS = 10 * 60_000;
export const MAX_SESSION_ITEMS = 100;

const instant = z
	.string({ error: 'must be a date and time, e.g. 2031-03-10T09:30:00Z' })
	.trim()
	.refine((s) => /^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}(:\d{2}(\.\d{1,3})?)?(Z|[+-]\d{2}:\d{2})$/.test(s) && Number.isFinite(Date.parse(s)), {
		message: 'must be a date and time with its zone, e.g. 2031-03-10T09:30:00Z'
	});
const codes = (what: string, min: number) =>
	z.array(z.string({ error: 'must be an item code' }).trim(), { error: `must be a list of ${what} codes` }).min(min, min ? `list at least one ${what}` : '').max(MAX_SESSION_ITEMS, `at most ${MAX_SESSION_ITEMS} ${what}s in one session`);

export const sessionInput = z.strictObject({
	items: codes('item', 1),
	atmosphere: z.enum(ATMOSPHERES, { error: `must be one of ${ATMOSPHERES.join(', ')}` }),
	start: instant,
	end: instant,
	temperatureC: z.number({ error: 'must be a number of °C' }).min(-273.15, 'cannot be below absolute zero').max(200, 'must be at most 200 °C').nullable().optional(),
	humidityPct: z.number({ error: 'must be a number of percent' }).min(0, 'must be 0–100 %').max(100, 'must be 0–100 %').nullable().optional(),
	operator: z.string({ error: 'must be the operator’s e-mail' }).trim().toLowerCase().optional(),
	contacts: z.array(z.string({ error: 'must be a catalogue name' }).trim(), { error: 'must be a list of catalogue names' }).max(40).optional(),
	blanks: codes('blank', 0).optional(),
	purpose: shortText(500).min(1, 'is required: say what the session was for'),
	notes: shortText(2000).optional()
});
export type SessionRequest = z.infer<typeof sessionInput>;

interface ItemBrief {
	id: string;
	code: string;
	kind: string;
	collection_id: string;
	holder_lab_id: string | null;
}

async function itemsByCode(sq: Sequelize, t: Transaction, list: string[], field: string): Promise<ItemBrief[]> {
	const parsed = list.map((c, i) => {
		try {
			return codeOrProblem(c);
		} catch (e) {
			if (e instanceof ApiProblem) throw new ApiProblem(422, e.code, `${field}.${i}: ${e.message}`, { [`${field}.${i}`]: e.message });
			throw e;
		}
	});
	const dup = parsed.findIndex((c, i) => parsed.indexOf(c) !== i);
	if (dup >= 0) throw new ApiProblem(422, 'invalid_input', `${field}.${dup}: ${parsed[dup]} is listed twice.`, { [`${field}.${dup}`]: `${parsed[dup]} is listed twice` });
	const rows = await sq.query<ItemBrief>('SELECT id, code, kind, collection_id, holder_lab_id FROM items WHERE code IN (:codes)', {
		type: QueryTypes.SELECT, replacements: { codes: parsed.length ? parsed : [''] }, transaction: t
	});
	return parsed.map((code, i) => {
		const r = rows.find((x) => x.code === code);
		if (!r) throw new ApiProblem(422, 'unknown_item', `${field}.${i}: there is no item ${code}.`, { [`${field}.${i}`]: `no item ${code}` });
		return r;
	});
}

const fmt = (d: Date | string) => new Date(d).toISOString().slice(0, 16).replace('T', ' ') + ' UTC';

/**
 * Records one handling session in one transaction, or refuses it whole: end not after start, an
 * unknown item or blank code, a blank listed as an item (or an item as a blank), items of several
 * collections, an atmosphere or a contact material the collection does not allow, an unknown
 * catalogue name or operator, and an overlap with another session of one of the same items.
 */
export async function recordSession(sq: Sequelize, who: Who, input: SessionRequest) {
	const start = new Date(input.start);
	const end = new Date(input.end);
	if (!(end > start)) {
		throw new ApiProblem(422, 'end_before_start', `end: the session must end after it starts (start ${fmt(start)}, end ${fmt(end)}).`, { end: `must be after the start (${fmt(start)})` });
	}
	if (end.getTime() > Date.now() + FUTURE_SLACK_MS) {
		throw new ApiProblem(422, 'in_future', `end: ${fmt(end)} is in the future; record a session once it has happened.`, { end: 'is in the future' });
	}
	try {
		return await sq.transaction(async (t) => {
			const items = await itemsByCode(sq, t, input.items, 'items');
			items.forEach((it, i) => {
				if (it.kind === 'blank') throw new ApiProblem(422, 'blank_as_item', `items.${i}: ${it.code} is a blank; list it under blanks.`, { [`items.${i}`]: `${it.code} is a blank` });
			});
			const collectionId = items[0].collection_id;
			const other = items.findIndex((it) => it.collection_id !== collectionId);
			if (other >= 0) throw new ApiProblem(422, 'mixed_collections', `items.${other}: ${items[other].code} belongs to another collection than ${items[0].code}; record one session per collection.`, { [`items.${other}`]: 'another collection' });
			const blanks = await itemsByCode(sq, t, input.blanks ?? [], 'blanks');
			blanks.forEach((b, i) => {
				if (b.kind !== 'blank') throw new ApiProblem(422, 'not_a_blank', `blanks.${i}: ${b.code} is not a blank (it is a ${b.kind}).`, { [`blanks.${i}`]: `${b.code} is not a blank` });
			});
			const [col] = await sq.query<CollectionRow>(
				'SELECT id, prefix, allowed_atmospheres, allowed_contact_materials, max_air_exposure_min FROM collections WHERE id = :id',
				{ type: QueryTypes.SELECT, replacements: { id: collectionId }, transaction: t }
			);
			const rules = rulesOf(col.allowed_atmospheres, col.max_air_exposure_min);
			if (!rules.allowedAtmospheres.includes(input.atmosphere)) {
				const allowed = rules.allowedAtmospheres.map((a) => ATMOSPHERE_LABELS[a].toLowerCase()).join(', ') || 'none';
				throw new ApiProblem(422, 'atmosphere_not_allowed', `atmosphere: ${ATMOSPHERE_LABELS[input.atmosphere]} is not allowed for ${col.prefix} (allowed: ${allowed}).`, {
					atmosphere: `not allowed for ${col.prefix}`
				});
			}
			const contacts: { id: string; name: string; kind: string; material: string }[] = [];
			for (const [i, name] of (input.contacts ?? []).entries()) {
				const [c] = await sq.query<{ id: string; name: string; kind: string; material: string }>(
					'SELECT id, name, kind, material FROM contact_catalogue WHERE collection_id = :col AND lower(name) = lower(:name)',
					{ type: QueryTypes.SELECT, replacements: { col: col.id, name }, transaction: t }
				);
				if (!c) throw new ApiProblem(422, 'unknown_contact', `contacts.${i}: "${name}" is not in the ${col.prefix} catalogue of contact materials and tools.`, { [`contacts.${i}`]: 'not in the catalogue' });
				if (!col.allowed_contact_materials.some((m) => m.toLowerCase() === c.material.toLowerCase())) {
					throw new ApiProblem(422, 'contact_not_allowed', `contacts.${i}: ${c.name} (${c.material}) is not an allowed contact material for ${col.prefix} (allowed: ${col.allowed_contact_materials.join(', ') || 'none'}).`, {
						[`contacts.${i}`]: `${c.material} is not allowed for ${col.prefix}`
					});
				}
				if (contacts.some((x) => x.id === c.id)) throw new ApiProblem(422, 'invalid_input', `contacts.${i}: ${c.name} is listed twice.`, { [`contacts.${i}`]: 'listed twice' });
				contacts.push(c);
			}
			const operatorEmail = input.operator || who.label;
			const [operator] = await sq.query<{ id: string; name: string; email: string }>(
				`SELECT id, name, email FROM users WHERE email = :e AND active AND role IN ('curator', 'admin')`,
				{ type: QueryTypes.SELECT, replacements: { e: operatorEmail }, transaction: t }
			);
			if (!operator) throw new ApiProblem(422, 'unknown_operator', `operator: ${operatorEmail} is not an active curator or admin.`, { operator: 'not an active curator or admin' });

			// lock the items so two sessions for one item queue here; the exclusion constraint is the backstop
			await sq.query('SELECT id FROM items WHERE id IN (:ids) ORDER BY id FOR UPDATE', { replacements: { ids: items.map((i) => i.id) }, transaction: t });
			const clash = await sq.query<{ code: string; started_at: Date; ended_at: Date; session_id: string }>(
				`SELECT i.code, s.started_at, s.ended_at, s.id AS session_id FROM handling_session_items hi
				 JOIN handling_sessions s ON s.id = hi.session_id JOIN items i ON i.id = hi.item_id
				 WHERE hi.item_id IN (:ids) AND hi.during && tstzrange(:start, :end, '[)') ORDER BY s.started_at LIMIT 1`,
				{ type: QueryTypes.SELECT, replacements: { ids: items.map((i) => i.id), start, end }, transaction: t }
			);
			if (clash.length) {
				const c = clash[0];
				const i = items.findIndex((x) => x.code === c.code);
				throw new ApiProblem(409, 'overlapping_session', `items.${i}: ${c.code} is already in a session from ${fmt(c.started_at)} to ${fmt(c.ended_at)}, which overlaps this one.`, {
					[`items.${i}`]: 'already in an overlapping session'
				}, { sessionId: c.session_id });
			}

			const [s] = await sq.query<{ id: string; recorded_at: Date }>(
				`INSERT INTO handling_sessions (collection_id, atmosphere, started_at, ended_at, temperature_c, humidity_pct, operator_id, purpose, notes, recorded_by)
				 VALUES (:col, :atm, :start, :end, :temp, :rh, :op, :purpose, :notes, :by) RETURNING id, recorded_at`,
				{
					type: QueryTypes.SELECT, transaction: t,
					replacements: {
						col: col.id, atm: input.atmosphere, start, end, temp: input.temperatureC ?? null, rh: input.humidityPct ?? null,
						op: operator.id, purpose: input.purpose, notes: input.notes ?? '', by: who.id
					}
				}
			);
			await sq.query(
				`INSERT INTO handling_session_items (session_id, item_id, during) SELECT :s, x, tstzrange(:start, :end, '[)') FROM unnest(CAST(:ids AS uuid[])) AS x`,
				{ transaction: t, replacements: { s: s.id, start, end, ids: `{${items.map((i) => i.id).join(',')}}` } }
			);
			if (contacts.length) {
				await sq.query('INSERT INTO handling_session_contacts (session_id, contact_id) SELECT :s, x FROM unnest(CAST(:ids AS uuid[])) AS x', {
					transaction: t, replacements: { s: s.id, ids: `{${contacts.map((c) => c.id).join(',')}}` }
				});
			}
			if (blanks.length) {
				await sq.query('INSERT INTO handling_session_blanks (session_id, blank_item_id) SELECT :s, x FROM unnest(CAST(:ids AS uuid[])) AS x', {
					transaction: t, replacements: { s: s.id, ids: `{${blanks.map((b) => b.id).join(',')}}` }
				});
			}
			const view = {
				id: s.id,
				collection: col.prefix,
				atmosphere: input.atmosphere,
				start: start.toISOString(),
				end: end.toISOString(),
				minutes: (end.getTime() - start.getTime()) / 60_000,
				temperatureC: input.temperatureC ?? null,
				humidityPct: input.humidityPct ?? null,
				operator: { email: operator.email, name: operator.name },
				purpose: input.purpose,
				notes: input.notes ?? '',
				items: items.map((i) => i.code),
				blanks: blanks.map((b) => b.code),
				contacts: contacts.map((c) => ({ name: c.name, kind: c.kind, material: c.material })),
				recordedAt: new Date(s.recorded_at).toISOString()
			};
			await appendTrail(sq, t, { actor: trailActor(who), action: 'handling.recorded', subjectType: 'handling_session', subjectId: s.id, after: view });
			return view;
		});
	} catch (e) {
		// two overlapping sessions recorded at the same moment: the exclusion constraint refused the second
		if ((e as { parent?: { code?: string } })?.parent?.code === '23P01') {
			throw new ApiProblem(409, 'overlapping_session', 'items: one of these items is already in a session that overlaps this one.', { items: 'already in an overlapping session' });
		}
		throw e;
	}
}
