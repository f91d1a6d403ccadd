import { z } from 'zod';
import { QueryTypes, type Sequelize, type Transaction } from 'sequelize';
import { formatCode } from '../../domain/codes';
import { parseCode } from '../../domain/codes';
import { ApiProblem } from '../api';
import { labFilter } from '../auth/scope';
import { appendTrail } from '../trail';
import { ITEM_STATES } from '../models/registry';
import { balanceForWeighing, checkCapacity } from './balances';
import { ITEM_COLUMNS, ITEM_FROM, findItem, itemView, micrograms, shortText, takeSerials, trailActor, type ItemRow, type Who } from './common';

export const registerInput = z.strictObject({
	collection: z.string({ error: 'must be a collection prefix such as TRN' }).trim().toUpperCase().regex(/^[A-Z]{2,5}$/, 'must be a collection prefix of 2 to 5 letters, such as TRN'),
	massUg: micrograms(),
	description: shortText(2000).min(1, 'is required: say what the specimen is'),
	kind: z.enum(['specimen', 'blank'], { error: 'must be "specimen" or "blank"' }).optional(),
	container: shortText(200).optional(),
	storagePlace: shortText(200).optional(),
	provenance: shortText(2000).optional(),
	weighing: z
		.strictObject({
			balanceId: z.string({ error: 'must be a balance id' }),
			tareUg: micrograms({ allowZero: true }).optional(),
			reason: shortText(2000).optional()
		})
		.optional()
});
export type RegisterRequest = z.infer<typeof registerInput>;

/**
 * Registers one parent specimen (or a root blank) inside the caller's transaction: fresh code,
 * optional weighing on a calibrated balance (refused below the minimum weight without a reason),
 * the first ledger entry and the trail event.
 */
export async function registerInTransaction(sq: Sequelize, t: Transaction, who: Who, input: RegisterRequest) {
	const [col] = await sq.query<{ id: string; prefix: string }>('SELECT id, prefix FROM collections WHERE prefix = :p', {
		type: QueryTypes.SELECT, replacements: { p: input.collection }, transaction: t
	});
	if (!col) throw new ApiProblem(422, 'unknown_collection', `collection: there is no collection with prefix ${input.collection}.`, { collection: 'no such collection' });
	const balance = input.weighing ? await balanceForWeighing(sq, t, input.weighing.balanceId, 'weighing.balanceId') : null;
	if (balance) checkCapacity(balance, [{ field: 'massUg', ug: input.massUg + (input.weighing!.tareUg ?? 0) }]);
	const below = balance ? input.massUg < balance.minimumWeightUg : false;
	if (below && !input.weighing?.reason) {
		throw new ApiProblem(422, 'reason_required', `${input.massUg} µg is below the minimum weight of ${balance!.minimumWeightUg} µg on ${balance!.name} (USP <41>): record a reason.`, {
			'weighing.reason': 'is required below the minimum weight'
		});
	}
	const serial = await takeSerials(sq, t, col.id, 1);
	const code = formatCode(col.prefix, serial);
	const [row] = await sq.query<{ id: string }>(
		`INSERT INTO items (collection_id, serial, code, depth, kind, description, initial_mass_ug, mass_ug, mass_u_ug, container, storage_place, provenance, created_by)
		 VALUES (:col, :serial, :code, 0, :kind, :description, :mass, :mass, :u, :container, :storage, :provenance, :op) RETURNING id`,
		{
			type: QueryTypes.SELECT,
			transaction: t,
			replacements: {
				col: col.id, serial, code, kind: input.kind ?? 'specimen', description: input.description, mass: input.massUg, u: balance?.netUUg ?? null,
				container: input.container ?? '', storage: input.storagePlace ?? '', provenance: input.provenance ?? '', op: who.id
			}
		}
	);
	let weighingId: string | null = null;
	if (balance) {
		const tare = input.weighing!.tareUg ?? 0;
		const [w] = await sq.query<{ id: string }>(
			`INSERT INTO weighings (item_id, balance_id, purpose, gross_ug, tare_ug, net_ug, u_ug, expanded_ug, minimum_weight_ug, below_minimum, reason, operator_id)
			 VALUES (:item, :balance, 'registration', :gross, :tare, :net, :u, :U, :min, :below, :reason, :op) RETURNING id`,
			{
				type: QueryTypes.SELECT,
				transaction: t,
				replacements: {
					item: row.id, balance: balance.id, gross: input.massUg + tare, tare, net: input.massUg, u: balance.netUUg, U: balance.netExpandedUg,
					min: balance.minimumWeightUg, below, reason: input.weighing!.reason || null, op: who.id
				}
			}
		);
		weighingId = w.id;
	}
	await sq.query(
		`INSERT INTO ledger_entries (item_id, seq, kind, delta_ug, balance_after_ug, u_after_ug, weighing_id, note, actor_id)
		 VALUES (:item, 1, 'registered', :mass, :mass, :u, :w, 'registered', :op)`,
		{ transaction: t, replacements: { item: row.id, mass: input.massUg, u: balance?.netUUg ?? null, w: weighingId, op: who.id } }
	);
	await appendTrail(sq, t, {
		actor: trailActor(who), action: 'item.registered', subjectType: 'item', subjectId: row.id,
		after: { code, ...input, balance: balance ? balance.name : null }
	});
	return code;
}

export async function registerSpecimen(sq: Sequelize, who: Who, input: RegisterRequest) {
	const code = await sq.transaction((t) => registerInTransaction(sq, t, who, input));
	return getItem(sq, who, code);
}

/** One item with its budget: initial = children's initial masses + split losses + remaining. */
export async function getItem(sq: Sequelize, who: Who, codeText: string, found?: ItemRow) {
	const row = found ?? (await findItem(sq, who, codeText));
	const [b] = await sq.query<{ children: number; children_ug: number; losses_ug: number; splits: number; used_ug: number }>(
		`SELECT (SELECT count(*)::int FROM items WHERE parent_id = :id) AS children,
		        (SELECT coalesce(sum(initial_mass_ug), 0)::bigint FROM items WHERE parent_id = :id) AS children_ug,
		        (SELECT coalesce(sum(loss_ug), 0)::bigint FROM splits WHERE parent_id = :id) AS losses_ug,
		        (SELECT count(*)::int FROM splits WHERE parent_id = :id) AS splits,
		        (SELECT coalesce(sum(consumed_ug + lost_ug + gap_ug), 0)::bigint FROM usage_reports WHERE item_id = :id) AS used_ug`,
		{ type: QueryTypes.SELECT, replacements: { id: row.id } }
	);
	return {
		...itemView(row),
		budget: {
			initialMassUg: row.initial_mass_ug,
			childrenInitialUg: b.children_ug,
			lossesUg: b.losses_ug,
			// consumed, lost in use or unaccounted for by a lab's usage report
			usedUg: b.used_ug,
			remainingUg: row.mass_ug,
			children: b.children,
			splits: b.splits,
			balanced: row.initial_mass_ug === b.children_ug + b.losses_ug + b.used_ug + row.mass_ug
		}
	};
}

const SORTS = {
	// the prefix is read from the code itself, so an index on items alone serves the order (migration 0050)
	code: { cols: ["split_part(i.code, '-', 1)", 'i.serial'], keys: ['prefix', 'serial'] },
	mass: { cols: ['i.mass_ug', 'i.code'], keys: ['mass_ug', 'code'] },
	registered: { cols: ['i.created_at', 'i.code'], keys: ['created_key', 'code'] }
} as const;

const queryText = (what: string) => z.string().trim().max(200, `${what} is too long`);

export const listQuery = z.strictObject({
	collection: queryText('collection').toUpperCase().regex(/^([A-Z]{2,5})?$/, 'must be a collection prefix such as TRN').optional(),
	state: z.enum(ITEM_STATES, { error: `must be one of ${ITEM_STATES.join(', ')}` }).or(z.literal('')).optional(),
	holder: z.string().regex(/^(|facility|[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12})$/i, 'must be "facility" or a lab id').optional(),
	kind: z.enum(['specimen', 'aliquot', 'blank'], { error: 'must be specimen, aliquot or blank' }).or(z.literal('')).optional(),
	q: queryText('q').optional(),
	sort: z.enum(['code', 'mass', 'registered'], { error: 'must be code, mass or registered' }).optional(),
	dir: z.enum(['asc', 'desc'], { error: 'must be asc or desc' }).optional(),
	after: z.string().max(500, 'is not a page cursor').optional(),
	limit: z.coerce.number({ error: 'must be a number' }).int('must be a whole number').min(1, 'must be at least 1').max(500, 'must be at most 500').optional()
});
export type ListQuery = z.infer<typeof listQuery>;

function decodeCursor(after: string, n: number): unknown[] {
	try {
		const v = JSON.parse(Buffer.from(after, 'base64url').toString('utf8'));
		if (Array.isArray(v) && v.length === n && v.every((x) => typeof x === 'string' || typeof x === 'number')) return v;
	} catch {
		/* fall through */
	}
	throw new ApiProblem(400, 'invalid_query', 'Invalid query: after: is not a page cursor from a previous answer.', { after: 'is not a page cursor' });
}

function likeEscape(s: string) {
	return s.replace(/[\\%_]/g, (c) => '\\' + c);
}

/** Keyset-paginated items within the viewer's sight, filtered and sorted. */
export async function listItems(sq: Sequelize, who: Who, q: ListQuery) {
	const sort = SORTS[q.sort ?? 'code'];
	const desc = q.dir === 'desc';
	const limit = q.limit ?? 50;
	const where: string[] = [];
	const r: Record<string, unknown> = { limit: limit + 1 };
	const lab = labFilter(who);
	if (lab !== null) {
		where.push('i.holder_lab_id = :scopeLab');
		r.scopeLab = lab;
	}
	if (q.collection) (where.push('c.prefix = :collection'), (r.collection = q.collection));
	if (q.state) (where.push('i.state = :state'), (r.state = q.state));
	if (q.kind) (where.push('i.kind = :kind'), (r.kind = q.kind));
	if (q.holder === 'facility') where.push('i.holder_lab_id IS NULL');
	else if (q.holder) (where.push('i.holder_lab_id = :holder'), (r.holder = q.holder.toLowerCase()));
	if (q.q) {
		if (/^[A-Za-z]+[-\u2010-\u2015\u2212]\d+[-\u2010-\u2015\u2212/][0-9A-Za-z]$/.test(q.q)) {
			const parsed = parseCode(q.q);
			if (!parsed.ok) throw new ApiProblem(400, parsed.kind === 'check' ? 'wrong_check_character' : 'invalid_code', `Item code "${q.q}": ${parsed.reason}.`, { q: parsed.reason });
			where.push('i.code = :code');
			r.code = parsed.code;
		} else {
			where.push(`(i.code ILIKE :qPrefix OR i.description ILIKE :qAny OR i.container ILIKE :qAny OR i.storage_place ILIKE :qAny)`);
			r.qPrefix = likeEscape(q.q.toUpperCase()) + '%';
			r.qAny = '%' + likeEscape(q.q) + '%';
		}
	}
	if (q.after) {
		const [a, b] = decodeCursor(q.after, 2);
		const cast = q.sort === 'registered' ? 'CAST(:ka AS timestamptz)' : ':ka';
		where.push(`(${sort.cols[0]}, ${sort.cols[1]}) ${desc ? '<' : '>'} (${cast}, :kb)`);
		r.ka = a;
		r.kb = b;
	}
	const order = sort.cols.map((c) => `${c} ${desc ? 'DESC' : 'ASC'}`).join(', ');
	const rows = await sq.query<ItemRow & { created_key: string }>(
		`SELECT ${ITEM_COLUMNS}, i.created_at::text AS created_key FROM ${ITEM_FROM}
		 ${where.length ? 'WHERE ' + where.join(' AND ') : ''} ORDER BY ${order} LIMIT :limit`,
		{ type: QueryTypes.SELECT, replacements: r }
	);
	const more = rows.length > limit;
	const page = rows.slice(0, limit);
	const last = page[page.length - 1] as unknown as Record<string, unknown> | undefined;
	const next = more && last ? Buffer.from(JSON.stringify(sort.keys.map((k) => last[k]))).toString('base64url') : null;
	return { items: page.map(itemView), next };
}

/** Every item of a list view, page by page (for the CSV export). */
export async function* allItems(sq: Sequelize, who: Who, q: ListQuery) {
	let after: string | undefined;
	do {
		const page = await listItems(sq, who, { ...q, after, limit: 500 });
		yield* page.items;
		after = page.next ?? undefined;
	} while (after);
}
