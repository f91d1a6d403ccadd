import { z } from 'zod';
import { QueryTypes, type Sequelize } from 'sequelize';
import { ATMOSPHERES, exposure, type HandlingSessionInput, type Lineage } from '../../domain/exposure';
import { NO_EXPOSURE, OFFER_SORTS, offerExposure, sortValue, type OfferConstraints, type OfferItem, type OfferSort } from '../../domain/offer';
import { ApiProblem } from '../api';
import { collectionSummaries, type CollectionSummary } from '../registry/collections';
import { collectionExposureInputs } from '../handling/exposure';
import { OFFER_DOCUMENT_KINDS } from '../documents/types';

/** An item on offer with what the planner needs besides (its mass uncertainty). */
export interface OfferRow extends OfferItem {
	uUg: number;
	/** internal: the item's id, never sent to a lab */
	id: string;
}

interface Snapshot {
	key: string;
	collections: CollectionSummary[];
	rows: OfferRow[];
	byCollection: Map<string, OfferRow[]>;
	sorted: Map<string, OfferRow[]>;
	/** rows that pass a filter, in one order, by filter and sort: the last few asked for */
	filtered: Map<string, OfferRow[]>;
	/** the documents a lab may see, by item id: the facility's photos and chromatograms */
	documents: Map<string, { id: string; name: string; kind: string }[]>;
}

const FILTERS_KEPT = 32;

let kept: Snapshot | null = null;
let building: { key: string; promise: Promise<Snapshot> } | null = null;

interface ItemRow {
	id: string;
	code: string;
	parent_id: string | null;
	prefix: string;
	kind: 'specimen' | 'aliquot' | 'blank';
	state: string;
	holder_lab_id: string | null;
	mass_ug: number;
	mass_u_ug: number;
	depth: number;
	split_at: Date | null;
	on_offer: boolean;
}

/**
 * What the offer depends on, as one short row per collection: the collection's lineage_version
 * (bumped by the database with every change to its items, migration 0051), its rules' last change,
 * the number of handling sessions and blank analyses (both tables are append-only, so a new
 * count is a new record), and the items' documents. While the key is the same, so is the offer.
 */
async function snapshotKey(sq: Sequelize): Promise<string> {
	const rows = await sq.query<{ k: string }>(
		`SELECT c.id || ':' || c.lineage_version || ':' || c.updated_at::text || ':' ||
		        (SELECT count(*) FROM handling_sessions s WHERE s.collection_id = c.id) AS k FROM collections c
		 UNION ALL SELECT 'analyses:' || count(*) FROM blank_analyses
		 UNION ALL SELECT 'documents:' || count(*) || ':' || coalesce(max(uploaded_at)::text, '') FROM documents WHERE subject_type = 'item'
		 UNION ALL SELECT 'labs:' || count(*) FROM labs`,
		{ type: QueryTypes.SELECT }
	);
	return rows.map((r) => r.k).sort().join('|');
}

/**
 * Every item on offer (stored at the facility, not a blank) with its exposure and blank coverage
 * computed by domain/exposure.ts from the collection's sessions, and the collections' allocatable
 * masses from collectionSummaries (the collection page's own computation). Items held by a lab,
 * in transit, earmarked, consumed or lost are not on offer.
 */
async function build(sq: Sequelize, key: string): Promise<Snapshot> {
	const collections = await collectionSummaries(sq);
	const items = await sq.query<ItemRow>(
		`SELECT i.id, i.code, i.parent_id, c.prefix, i.kind, i.state, i.holder_lab_id, i.mass_ug, i.mass_u_ug, i.depth, sp.at AS split_at,
		        (i.state = 'stored' AND i.holder_lab_id IS NULL AND i.kind <> 'blank') AS on_offer
		 FROM items i JOIN collections c ON c.id = i.collection_id LEFT JOIN splits sp ON sp.id = i.split_id`,
		{ type: QueryTypes.SELECT }
	);
	const byId = new Map(items.map((i) => [i.id, i]));
	const ids = await sq.query<{ id: string; prefix: string }>('SELECT id, prefix FROM collections', { type: QueryTypes.SELECT });
	const inputs = new Map<string, Awaited<ReturnType<typeof collectionExposureInputs>>>();
	for (const c of ids) inputs.set(c.prefix, await collectionExposureInputs(sq, c.id));
	// sessions by the code of each item they list, so an item's path finds its sessions directly
	const sessionsByCode = new Map<string, HandlingSessionInput[]>();
	for (const { sessions } of inputs.values()) {
		for (const s of sessions) for (const code of s.itemIds) sessionsByCode.set(code, [...(sessionsByCode.get(code) ?? []), s]);
	}
	const allocatable = new Map(collections.map((c) => [c.prefix, c.allocatableUg]));
	const rows: OfferRow[] = [];
	for (const it of items) {
		if (!it.on_offer) continue;
		const path: ItemRow[] = [it];
		for (let p = it.parent_id ? byId.get(it.parent_id) : undefined; p; p = p.parent_id ? byId.get(p.parent_id) : undefined) path.push(p);
		const touching = new Set<HandlingSessionInput>();
		for (const p of path) for (const s of sessionsByCode.get(p.code) ?? []) touching.add(s);
		let ex = NO_EXPOSURE;
		let coverage: number | null = null;
		if (touching.size) {
			// the parent's cut-off is when the item was split off; the grandparent's, when the parent was; …
			const lineage: Lineage = { itemId: it.code, ancestors: path.slice(1).map((p, k) => ({ itemId: p.code, childSplitAt: path[k].split_at ?? new Date(0) })) };
			const report = exposure(lineage, [...touching], inputs.get(it.prefix)!.rules);
			ex = offerExposure(report);
			coverage = report.coverage.share;
		}
		const mass = Number(it.mass_ug);
		rows.push({
			id: it.id, code: it.code, collection: it.prefix, kind: it.kind as 'specimen' | 'aliquot', massUg: mass, uUg: Number(it.mass_u_ug),
			allocatableUg: Math.min(mass, allocatable.get(it.prefix) ?? 0), depth: it.depth, exposure: ex, blankCoverage: coverage
		});
	}
	const byCollection = new Map<string, OfferRow[]>();
	for (const r of rows) {
		const list = byCollection.get(r.collection);
		if (list) list.push(r);
		else byCollection.set(r.collection, [r]);
	}
	const docs = await sq.query<{ subject_id: string; id: string; original_name: string; kind: string }>(
		`SELECT subject_id, id, original_name, kind FROM documents WHERE subject_type = 'item' AND lab_id IS NULL AND kind IN (:kinds) ORDER BY uploaded_at`,
		{ type: QueryTypes.SELECT, replacements: { kinds: [...OFFER_DOCUMENT_KINDS] } }
	);
	const documents = new Map<string, { id: string; name: string; kind: string }[]>();
	for (const d of docs) {
		const list = documents.get(d.subject_id) ?? [];
		list.push({ id: d.id, name: d.original_name, kind: d.kind });
		documents.set(d.subject_id, list);
	}
	return { key, collections, rows, byCollection, sorted: new Map(), filtered: new Map(), documents };
}

/** The offer as of now: computed once per change of what it depends on, and kept in memory. */
export async function offerSnapshot(sq: Sequelize): Promise<Snapshot> {
	const key = await snapshotKey(sq);
	if (kept?.key === key) return kept;
	if (building?.key !== key) {
		const promise = build(sq, key);
		building = { key, promise };
		promise.then(
			(s) => {
				if (building?.key === key) building = null;
				kept = s;
			},
			() => {
				if (building?.key === key) building = null;
			}
		);
	}
	return building!.promise;
}

/** Forgets the kept offer (benchmarks measure a cold offer with it). */
export function forgetOffer() {
	kept = null;
}

const flag = z.enum(['true', 'false', '1', '0', 'yes', 'no', ''], { error: 'must be true or false' }).transform((v) => v === 'true' || v === '1' || v === 'yes');
const num = (what: string) => z.string().trim().regex(/^\d+(\.\d+)?$/, `must be ${what}`).transform(Number);

/** GET /api/offer's query: the offer's filters (the same fields a request keeps), sort and page. */
export const offerQuery = z
	.strictObject({
		collection: z.string().trim().toUpperCase().regex(/^[A-Z]{2,5}$/, 'must be a collection prefix such as TRN').optional(),
		minMassUg: z.string().trim().regex(/^\d+$/, 'must be whole micrograms').transform(Number).optional(),
		neverAmbient: flag.optional(),
		minCoverage: num('a share from 0 to 1').refine((x) => x <= 1, 'must be a share from 0 to 1').optional(),
		kind: z.enum(['specimen', 'aliquot'], { error: 'must be specimen or aliquot' }).optional(),
		sort: z.enum(OFFER_SORTS, { error: `must be one of ${OFFER_SORTS.join(', ')}` }).default('code'),
		dir: z.enum(['asc', 'desc'], { error: 'must be asc or desc' }).default('asc'),
		limit: z.string().regex(/^\d+$/, 'must be a whole number').transform(Number).refine((n) => n >= 1 && n <= 200, 'must be from 1 to 200').default(50),
		cursor: z.string().max(500, 'is not a page cursor').optional(),
		...Object.fromEntries(ATMOSPHERES.map((a) => [`maxMinutes.${a}`, num('minutes').optional()]))
	})
	.transform((q) => {
		const maxMinutes: Partial<Record<(typeof ATMOSPHERES)[number], number>> = {};
		for (const a of ATMOSPHERES) {
			const v = (q as Record<string, unknown>)[`maxMinutes.${a}`];
			if (typeof v === 'number') maxMinutes[a] = v;
		}
		const constraints: OfferConstraints = {
			...(q.minMassUg !== undefined ? { minMassUg: q.minMassUg } : {}),
			...(q.neverAmbient ? { neverAmbient: true } : {}),
			...(Object.keys(maxMinutes).length ? { maxMinutes } : {}),
			...(q.minCoverage !== undefined ? { minCoverage: q.minCoverage } : {}),
			...(q.kind ? { kind: q.kind } : {})
		};
		return { collection: q.collection, constraints, sort: q.sort as OfferSort, dir: q.dir, limit: q.limit, cursor: q.cursor };
	});
export type OfferQuery = z.output<typeof offerQuery>;

type Key = [number | string, string];

function cmp(a: Key, b: Key): number {
	if (a[0] !== b[0]) return a[0] < b[0] ? -1 : 1;
	return a[1] < b[1] ? -1 : a[1] > b[1] ? 1 : 0;
}

function decodeCursor(text: string, sort: OfferSort): Key {
	try {
		const v = JSON.parse(Buffer.from(text, 'base64url').toString('utf8'));
		const numeric = sort !== 'code' && sort !== 'kind';
		if (Array.isArray(v) && v.length === 2 && typeof v[1] === 'string' && (numeric ? typeof v[0] === 'number' : typeof v[0] === 'string')) return v as Key;
	} catch {
		/* answered below */
	}
	throw new ApiProblem(400, 'invalid_query', 'Invalid query: cursor: is not a page cursor from a previous answer with the same sort.', { cursor: 'is not a page cursor' });
}

/** The rows in one order, kept with the snapshot: (value, code) ascending. */
function sortedRows(s: Snapshot, sort: OfferSort): OfferRow[] {
	let rows = s.sorted.get(sort);
	if (!rows) {
		const keyed = s.rows.map((r) => ({ r, k: [sortValue(r, sort), r.code] as Key }));
		keyed.sort((a, b) => cmp(a.k, b.k));
		rows = keyed.map((x) => x.r);
		s.sorted.set(sort, rows);
	}
	return rows;
}

/** The rows that pass the query's filters, ascending in its sort; kept for the next pages and the next clients. */
function filteredRows(s: Snapshot, q: OfferQuery): OfferRow[] {
	const k = JSON.stringify([q.sort, q.collection ?? null, q.constraints]);
	let rows = s.filtered.get(k);
	if (rows) {
		s.filtered.delete(k);
		s.filtered.set(k, rows);
		return rows;
	}
	rows = sortedRows(s, q.sort).filter((r) => matches(r, q));
	s.filtered.set(k, rows);
	if (s.filtered.size > FILTERS_KEPT) s.filtered.delete(s.filtered.keys().next().value!);
	return rows;
}

/** An offer filter: the request's constraints without the collection's rules (the offer shows rule flags, the planner refuses them). */
function matches(r: OfferRow, q: OfferQuery): boolean {
	if (q.collection && r.collection !== q.collection) return false;
	const c = q.constraints;
	if (c.minMassUg !== undefined && r.massUg < c.minMassUg) return false;
	if (c.neverAmbient && r.exposure.everAmbient) return false;
	if (c.kind && r.kind !== c.kind) return false;
	if (c.minCoverage !== undefined && r.blankCoverage !== null && r.blankCoverage < c.minCoverage) return false;
	if (c.maxMinutes) for (const a of ATMOSPHERES) if (c.maxMinutes[a] !== undefined && r.exposure.total[a] > c.maxMinutes[a]!) return false;
	return true;
}

function publicRow(r: OfferRow) {
	return {
		code: r.code, collection: r.collection, kind: r.kind, massUg: r.massUg, allocatableUg: r.allocatableUg, depth: r.depth,
		exposure: r.exposure, blankCoverage: r.blankCoverage
	};
}
export type OfferItemView = ReturnType<typeof publicRow> & { documents: { id: string; name: string; kind: string }[] };

/**
 * GET /api/offer: per collection the allocatable mass (DESIGN §3.4, as on the collection page)
 * and the reserve; items on offer filtered, sorted and paged by keyset (`next` is the cursor of
 * the following page). Nothing in the answer says who holds anything: only facility items are on
 * offer.
 */
export async function getOffer(sq: Sequelize, q: OfferQuery) {
	const s = await offerSnapshot(sq);
	if (q.collection && !s.collections.some((c) => c.prefix === q.collection)) {
		throw new ApiProblem(400, 'invalid_query', `Invalid query: collection: there is no collection ${q.collection}.`, { collection: 'no such collection' });
	}
	const rows = filteredRows(s, q);
	const asc = q.dir === 'asc';
	const key = (r: OfferRow): Key => [sortValue(r, q.sort), r.code];
	// rows are ascending by (value, code); a descending page walks them from the end
	let start = asc ? 0 : rows.length - 1;
	if (q.cursor) {
		const after = decodeCursor(q.cursor, q.sort);
		let lo = 0;
		let hi = rows.length;
		while (lo < hi) {
			const mid = (lo + hi) >> 1;
			if (cmp(key(rows[mid]), after) <= 0) lo = mid + 1;
			else hi = mid;
		}
		// lo: the first row after the cursor; descending, the last row before it
		start = asc ? lo : lo - 1;
		while (!asc && start >= 0 && cmp(key(rows[start]), after) >= 0) start--;
	}
	const page: OfferRow[] = [];
	for (let i = start; page.length < q.limit && (asc ? i < rows.length : i >= 0); i += asc ? 1 : -1) page.push(rows[i]);
	const more = asc ? start + page.length < rows.length : start - page.length >= 0;
	const matched = rows.length;
	const last = page[page.length - 1];
	const next = more && last ? Buffer.from(JSON.stringify(key(last))).toString('base64url') : null;
	return {
		collections: s.collections.map((c) => ({
			code: c.prefix, name: c.name, allocatableUg: c.allocatableUg, reserveUg: c.reserveUg, pristineUg: c.pristineUg, earmarkedUg: c.earmarkedUg,
			rules: c.rules
		})),
		items: page.map((r): OfferItemView => ({ ...publicRow(r), documents: s.documents.get(r.id) ?? [] })),
		matched,
		next
	};
}

/** Items on offer in one collection (the planner's candidates). */
export async function offeredItems(sq: Sequelize, prefix: string): Promise<OfferRow[]> {
	return (await offerSnapshot(sq)).byCollection.get(prefix) ?? [];
}

