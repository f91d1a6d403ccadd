import { z } from 'zod';
import { QueryTypes, type Sequelize, type Transaction } from 'sequelize';
import { ATMOSPHERES, ATMOSPHERE_LABELS, exposure, type Atmosphere, type HandlingSessionInput, type Lineage } from '../../domain/exposure';
import { rulesOf } from '../../domain/handling';
import { ApiProblem } from '../api';
import { canSeeLab } from '../auth/scope';
import { appendTrail } from '../trail';
import { codeOrProblem, findItem, shortText, trailActor, type Who } from '../registry/common';

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

interface CollectionRow {
	id: string;
	prefix: string;
	allowed_atmospheres: string[];
	allowed_contact_materials: string[];
	max_air_exposure_min: number | null;
}

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

interface SessionRow {
	id: string;
	prefix: string;
	atmosphere: Atmosphere;
	started_at: Date;
	ended_at: Date;
	temperature_c: string | null;
	humidity_pct: string | null;
	operator_email: string;
	operator_name: string;
	purpose: string;
	notes: string;
	recorded_at: Date;
	items: { id: string; code: string; holder: string | null }[];
	blanks: { id: string; code: string; analysed: boolean }[];
	contacts: { name: string; kind: string; material: string }[];
}

const SESSION_SELECT = `
	SELECT s.id, c.prefix, s.atmosphere, s.started_at, s.ended_at, s.temperature_c, s.humidity_pct, u.email AS operator_email, u.name AS operator_name,
	       s.purpose, s.notes, s.recorded_at,
	       (SELECT coalesce(jsonb_agg(jsonb_build_object('id', i.id, 'code', i.code, 'holder', i.holder_lab_id) ORDER BY i.serial), '[]')
	          FROM handling_session_items hi JOIN items i ON i.id = hi.item_id WHERE hi.session_id = s.id) AS items,
	       (SELECT coalesce(jsonb_agg(jsonb_build_object('id', b.id, 'code', b.code,
	               'analysed', EXISTS (SELECT 1 FROM blank_analyses a WHERE a.blank_item_id = b.id)) ORDER BY b.serial), '[]')
	          FROM handling_session_blanks hb JOIN items b ON b.id = hb.blank_item_id WHERE hb.session_id = s.id) AS blanks,
	       (SELECT coalesce(jsonb_agg(jsonb_build_object('name', k.name, 'kind', k.kind, 'material', k.material) ORDER BY k.name), '[]')
	          FROM handling_session_contacts hc JOIN contact_catalogue k ON k.id = hc.contact_id WHERE hc.session_id = s.id) AS contacts
	FROM handling_sessions s JOIN collections c ON c.id = s.collection_id JOIN users u ON u.id = s.operator_id`;

function sessionView(r: SessionRow) {
	return {
		id: r.id,
		collection: r.prefix,
		atmosphere: r.atmosphere,
		atmosphereLabel: ATMOSPHERE_LABELS[r.atmosphere],
		start: new Date(r.started_at).toISOString(),
		end: new Date(r.ended_at).toISOString(),
		minutes: (new Date(r.ended_at).getTime() - new Date(r.started_at).getTime()) / 60_000,
		temperatureC: r.temperature_c === null ? null : Number(r.temperature_c),
		humidityPct: r.humidity_pct === null ? null : Number(r.humidity_pct),
		operator: { email: r.operator_email, name: r.operator_name },
		purpose: r.purpose,
		notes: r.notes,
		items: r.items.map((i) => i.code),
		blanks: r.blanks.map((b) => ({ code: b.code, analysed: b.analysed })),
		contacts: r.contacts,
		recordedAt: new Date(r.recorded_at).toISOString()
	};
}
export type SessionView = ReturnType<typeof sessionView>;

/** Sessions that lab members may see: those with at least one item their lab holds. */
function visibleTo(who: Who, r: SessionRow): boolean {
	return who.role !== 'lab_member' || r.items.some((i) => canSeeLab(who, i.holder));
}

export async function getSession(sq: Sequelize, who: Who, id: string): Promise<SessionView> {
	const [r] = await sq.query<SessionRow>(`${SESSION_SELECT} WHERE s.id = :id`, { type: QueryTypes.SELECT, replacements: { id } });
	if (!r || !visibleTo(who, r)) throw new ApiProblem(404, 'not_found', 'No such handling session.');
	return sessionView(r);
}

export const listQuery = z.strictObject({
	item: z.string().optional(),
	collection: z.string().trim().toUpperCase().regex(/^[A-Z]{2,5}$/, 'must be a collection prefix').optional(),
	limit: z.coerce.number({ error: 'must be a number' }).int('must be a whole number').min(1, 'must be at least 1').max(500, 'must be at most 500').optional()
});

export async function listSessions(sq: Sequelize, who: Who, q: z.infer<typeof listQuery>) {
	const where: string[] = [];
	const replacements: Record<string, unknown> = { limit: q.limit ?? 100 };
	if (q.item) {
		const item = await findItem(sq, who, q.item);
		replacements.item = item.id;
		where.push('EXISTS (SELECT 1 FROM handling_session_items x WHERE x.session_id = s.id AND x.item_id = :item)');
	}
	if (q.collection) {
		replacements.prefix = q.collection;
		where.push('c.prefix = :prefix');
	}
	const rows = await sq.query<SessionRow>(`${SESSION_SELECT} ${where.length ? 'WHERE ' + where.join(' AND ') : ''} ORDER BY s.started_at DESC LIMIT :limit`, {
		type: QueryTypes.SELECT, replacements
	});
	return rows.filter((r) => visibleTo(who, r)).map(sessionView);
}

/** The contact catalogue of a collection, each entry marked allowed or not by the collection's rules. */
export async function catalogue(sq: Sequelize, prefix: string) {
	const rows = await sq.query<{ name: string; kind: string; material: string; allowed: boolean }>(
		`SELECT k.name, k.kind, k.material, EXISTS (SELECT 1 FROM unnest(c.allowed_contact_materials) m WHERE lower(m) = lower(k.material)) AS allowed
		 FROM contact_catalogue k JOIN collections c ON c.id = k.collection_id WHERE c.prefix = :prefix ORDER BY k.kind, k.name`,
		{ type: QueryTypes.SELECT, replacements: { prefix } }
	);
	return rows;
}

/** A session as domain/exposure.ts takes it: items and blanks by code. */
function exposureInput(s: SessionRow): HandlingSessionInput {
	return {
		id: s.id,
		atmosphere: s.atmosphere,
		start: s.started_at,
		end: s.ended_at,
		itemIds: s.items.map((i) => i.code),
		blanks: s.blanks.map((b) => ({ blankId: b.code, analysed: b.analysed }))
	};
}

/**
 * Every handling session of one collection as exposure() takes it, with the collection's rules,
 * for computing many items' exposure at once (the offer, the planner).
 */
export async function collectionExposureInputs(sq: Sequelize, collectionId: string) {
	const sessions = await sq.query<SessionRow>(`${SESSION_SELECT} WHERE s.collection_id = :id ORDER BY s.started_at`, { type: QueryTypes.SELECT, replacements: { id: collectionId } });
	const [col] = await sq.query<CollectionRow>('SELECT id, prefix, allowed_atmospheres, allowed_contact_materials, max_air_exposure_min FROM collections WHERE id = :id', {
		type: QueryTypes.SELECT, replacements: { id: collectionId }
	});
	return { sessions: sessions.map(exposureInput), rules: rulesOf(col.allowed_atmospheres, col.max_air_exposure_min) };
}

interface PathRow {
	item_id: string;
	start_id: string;
	code: string;
	level: number;
	split_at: Date | null;
}

/**
 * Exposure reports (DESIGN.md §3.5–3.6, computed by domain/exposure.ts) for several items of one
 * collection at once: each item's path to its parent specimen with the split times, and every
 * session on any item of those paths, fetched in two queries.
 */
async function exposures(sq: Sequelize, ids: string[], collectionId: string) {
	const paths = await sq.query<PathRow>(
		`WITH RECURSIVE up AS (
			SELECT i.id AS item_id, i.id AS start_id, i.parent_id, i.split_id, 0 AS level FROM items i WHERE i.id IN (:ids)
			UNION ALL
			SELECT p.id, up.start_id, p.parent_id, p.split_id, up.level + 1 FROM items p JOIN up ON p.id = up.parent_id
		)
		SELECT up.item_id, up.start_id, i.code, up.level, sp.at AS split_at
		FROM up JOIN items i ON i.id = up.item_id LEFT JOIN splits sp ON sp.id = up.split_id ORDER BY up.start_id, up.level`,
		{ type: QueryTypes.SELECT, replacements: { ids } }
	);
	const all = [...new Set(paths.map((p) => p.item_id))];
	const sessions = await sq.query<SessionRow>(
		`${SESSION_SELECT} WHERE EXISTS (SELECT 1 FROM handling_session_items x WHERE x.session_id = s.id AND x.item_id IN (:all)) ORDER BY s.started_at`,
		{ type: QueryTypes.SELECT, replacements: { all } }
	);
	const [col] = await sq.query<CollectionRow>('SELECT id, prefix, allowed_atmospheres, allowed_contact_materials, max_air_exposure_min FROM collections WHERE id = :id', {
		type: QueryTypes.SELECT, replacements: { id: collectionId }
	});
	const rules = rulesOf(col.allowed_atmospheres, col.max_air_exposure_min);
	const inputs: HandlingSessionInput[] = sessions.map(exposureInput);
	const out = new Map<string, ReturnType<typeof exposure>>();
	for (const id of ids) {
		const path = paths.filter((p) => p.start_id === id);
		// the parent's cut-off is when the item was split off; the grandparent's, when the parent was; …
		const lineage: Lineage = {
			itemId: path[0].code,
			ancestors: path.slice(1).map((p, k) => ({ itemId: p.code, childSplitAt: path[k].split_at ?? new Date(0) }))
		};
		out.set(id, exposure(lineage, inputs, rules));
	}
	return { reports: out, sessions: sessions.map(sessionView), rules, prefix: col.prefix };
}

interface SplitFlagRow {
	id: string;
	at: Date;
	parent_code: string;
	role: 'origin' | 'parent';
	children: string[];
}

/** Splits made from or into the item that name no handling session. */
async function splitsWithoutSession(sq: Sequelize, itemId: string) {
	const rows = await sq.query<SplitFlagRow>(
		`SELECT sp.id, sp.at, p.code AS parent_code, CASE WHEN sp.parent_id = :id THEN 'parent' ELSE 'origin' END AS role,
		        (SELECT coalesce(array_agg(k.code ORDER BY k.serial), '{}') FROM items k WHERE k.split_id = sp.id) AS children
		 FROM splits sp JOIN items p ON p.id = sp.parent_id
		 WHERE sp.handling_session_id IS NULL AND (sp.parent_id = :id OR sp.id = (SELECT split_id FROM items WHERE id = :id))
		 ORDER BY sp.at`,
		{ type: QueryTypes.SELECT, replacements: { id: itemId } }
	);
	return rows.map((r) => ({ splitId: r.id, at: new Date(r.at).toISOString(), parentCode: r.parent_code, role: r.role, children: r.children, flag: 'no handling session on record' as const }));
}

/**
 * GET /api/items/{code}/exposure: the item's exposure report, the sessions behind it, its splits
 * without a session on record, and flags for each item along its lineage (ancestors and direct
 * aliquots), so the lineage tree can show where the rules were broken or blanks are missing.
 */
export async function itemExposure(sq: Sequelize, who: Who, codeText: string) {
	const item = await findItem(sq, who, codeText);
	const related = await sq.query<{ id: string; code: string; holder_lab_id: string | null; relation: string }>(
		`WITH RECURSIVE up AS (
			SELECT parent_id AS id FROM items WHERE id = :id
			UNION ALL SELECT p.parent_id FROM items p JOIN up ON p.id = up.id WHERE p.parent_id IS NOT NULL
		)
		SELECT i.id, i.code, i.holder_lab_id, 'ancestor' AS relation FROM items i WHERE i.id IN (SELECT id FROM up)
		UNION ALL SELECT i.id, i.code, i.holder_lab_id, 'aliquot' FROM items i WHERE i.parent_id = :id`,
		{ type: QueryTypes.SELECT, replacements: { id: item.id } }
	);
	const visible = related.filter((r) => canSeeLab(who, r.holder_lab_id));
	const { reports, sessions, rules, prefix } = await exposures(sq, [item.id, ...visible.map((r) => r.id)], item.collection_id);
	const report = reports.get(item.id)!;
	const shown = new Set(report.sessions.map((s) => s.sessionId));
	const unsplit = await splitsWithoutSession(sq, item.id);
	const flagsOf = (id: string) => {
		const r = reports.get(id)!;
		return { violations: r.violations.length, uncovered: r.coverage.uncovered.length, coverage: r.coverage.share };
	};
	return {
		code: item.code,
		collection: prefix,
		rules,
		report,
		sessions: sessions.filter((s) => shown.has(s.id)),
		splitsWithoutSession: unsplit,
		lineageFlags: [
			...visible.filter((r) => r.relation === 'ancestor').map((r) => ({ code: r.code, relation: 'ancestor', ...flagsOf(r.id) })),
			{ code: item.code, relation: 'self', ...flagsOf(item.id) },
			...visible.filter((r) => r.relation === 'aliquot').map((r) => ({ code: r.code, relation: 'aliquot', ...flagsOf(r.id) }))
		]
	};
}

export const attachInput = z.strictObject({ sessionId: z.string({ error: 'must be a handling session id' }).uuid('must be a handling session id') });

/** A session may be named for a split when it lists the split's parent item. */
async function assertSessionFits(sq: Sequelize, t: Transaction, sessionId: string, parentId: string, parentCode: string, field: string) {
	const [s] = await sq.query<{ id: string; has: boolean }>(
		'SELECT s.id, EXISTS (SELECT 1 FROM handling_session_items x WHERE x.session_id = s.id AND x.item_id = :p) AS has FROM handling_sessions s WHERE s.id = :s',
		{ type: QueryTypes.SELECT, replacements: { s: sessionId, p: parentId }, transaction: t }
	);
	if (!s) throw new ApiProblem(422, 'unknown_session', `${field}: there is no handling session ${sessionId}.`, { [field]: 'no such handling session' });
	if (!s.has) throw new ApiProblem(422, 'session_without_item', `${field}: that handling session does not list ${parentCode}, the item that was split.`, { [field]: `does not list ${parentCode}` });
}

/** Checks a session named when a split is recorded (used inside the split's transaction). */
export async function checkSplitSession(sq: Sequelize, t: Transaction, sessionId: string, parentId: string, parentCode: string) {
	if (!/^[0-9a-f-]{36}$/i.test(sessionId)) throw new ApiProblem(422, 'invalid_input', 'handlingSessionId: must be a handling session id.', { handlingSessionId: 'must be a handling session id' });
	await assertSessionFits(sq, t, sessionId, parentId, parentCode, 'handlingSessionId');
}

/** Attaches a handling session to a split that was recorded without one: once, and on the trail. */
export async function attachSession(sq: Sequelize, who: Who, splitId: string, input: z.infer<typeof attachInput>) {
	return sq.transaction(async (t) => {
		const [sp] = await sq.query<{ id: string; parent_id: string; parent_code: string; handling_session_id: string | null }>(
			'SELECT sp.id, sp.parent_id, p.code AS parent_code, sp.handling_session_id FROM splits sp JOIN items p ON p.id = sp.parent_id WHERE sp.id = :id FOR UPDATE OF sp',
			{ type: QueryTypes.SELECT, replacements: { id: splitId }, transaction: t }
		);
		if (!sp) throw new ApiProblem(404, 'not_found', 'No such split.');
		if (sp.handling_session_id) throw new ApiProblem(409, 'already_attached', `This split of ${sp.parent_code} already names a handling session (${sp.handling_session_id}); it cannot be changed.`);
		await assertSessionFits(sq, t, input.sessionId, sp.parent_id, sp.parent_code, 'sessionId');
		await sq.query('UPDATE splits SET handling_session_id = :s WHERE id = :id', { transaction: t, replacements: { s: input.sessionId, id: sp.id } });
		const after = { splitId: sp.id, parentCode: sp.parent_code, handlingSessionId: input.sessionId };
		await appendTrail(sq, t, { actor: trailActor(who), action: 'split.session_attached', subjectType: 'split', subjectId: sp.id, before: { handlingSessionId: null }, after });
		return after;
	});
}
