import { z } from 'zod';
import { QueryTypes, type Sequelize, type Transaction } from 'sequelize';
import { parseCode } from '../../domain/codes';
// db.ts registers the exact BIGINT parser; the registry reads masses as numbers on any connection
import '../db';
import { ApiProblem } from '../api';
import { canSeeLab, type Viewer } from '../auth/scope';
import type { Role, SessionUser } from '../auth/types';
import type { TrailActor } from '../trail';

/** Who is asking: their trail identity and what they may see. */
export interface Who extends Viewer {
	id: string | null;
	label: string;
	role: Role;
}

export function whoFrom(user: SessionUser): Who {
	return { id: user.id, label: user.email, role: user.role, labId: user.labId };
}

export const SYSTEM_WHO: Who = { id: null, label: 'system', role: 'admin', labId: null };

export function trailActor(who: Who): TrailActor {
	return { id: who.id, label: who.label };
}

function describe(v: unknown): string {
	if (v === null) return 'null';
	if (Array.isArray(v)) return 'a list';
	if (typeof v === 'string') return `the text "${v.slice(0, 40)}"`;
	if (typeof v === 'number') return String(v);
	return `a ${typeof v}`;
}

/**
 * A mass in whole micrograms as a JSON number. Refuses text, lists, fractions, values beyond
 * exact integer range and (unless allowZero) zero, with a message saying which.
 */
export function micrograms(opts: { allowZero?: boolean } = {}) {
	return z.unknown().transform((v, ctx): number => {
		const fail = (message: string) => {
			ctx.addIssue({ code: 'custom', message });
			return z.NEVER;
		};
		if (v === undefined) return fail('is required: a whole number of micrograms');
		if (typeof v !== 'number') return fail(`must be a whole number of micrograms written as a JSON number, got ${describe(v)}`);
		if (!Number.isFinite(v)) return fail(`must be a finite whole number of micrograms, got ${v}`);
		if (!Number.isInteger(v)) return fail(`must be a whole number of micrograms (no fractions of a µg), got ${v}`);
		if (!Number.isSafeInteger(v)) return fail(`is too large: ${v} µg is beyond what can be recorded exactly`);
		if (v < 0) return fail(`cannot be negative, got ${v} µg`);
		if (v === 0 && !opts.allowZero) return fail('must be more than zero µg');
		return v;
	});
}

export const shortText = (max: number) => z.string({ error: 'must be text' }).trim().max(max, `must be at most ${max} characters`);

/** Reads an item code from a path or query and refuses malformed codes and wrong check characters. */
export function codeOrProblem(text: string): string {
	const parsed = parseCode(text);
	if (!parsed.ok) {
		throw new ApiProblem(
			400,
			parsed.kind === 'check' ? 'wrong_check_character' : 'invalid_code',
			`Item code ${JSON.stringify(String(text).trim())}: ${parsed.reason}.`,
			{ code: parsed.reason }
		);
	}
	return parsed.code;
}

export interface ItemRow {
	id: string;
	code: string;
	serial: number;
	collection_id: string;
	prefix: string;
	collection_name: string;
	parent_id: string | null;
	parent_code: string | null;
	depth: number;
	kind: 'specimen' | 'aliquot' | 'blank';
	description: string;
	initial_mass_ug: number;
	mass_ug: number;
	mass_u_ug: number | null;
	state: string;
	holder_lab_id: string | null;
	holder_name: string | null;
	container: string;
	storage_place: string;
	provenance: string;
	created_at: Date;
	/** changes with every change to the collection's items (migration 0051) */
	lineage_version: number;
	/** the collection's loss tolerance: an absolute one, or else a fraction */
	loss_tolerance_ug: number | null;
	loss_tolerance_fraction: string | null;
}

export const ITEM_COLUMNS = `
	i.id, i.code, i.serial, i.collection_id, c.prefix, c.name AS collection_name, i.parent_id, p.code AS parent_code,
	i.depth, i.kind, i.description, i.initial_mass_ug, i.mass_ug, i.mass_u_ug, i.state, i.holder_lab_id,
	l.name AS holder_name, i.container, i.storage_place, i.provenance, i.created_at, c.lineage_version,
	c.loss_tolerance_ug, c.loss_tolerance_fraction`;

export const ITEM_FROM = `
	items i JOIN collections c ON c.id = i.collection_id
	LEFT JOIN items p ON p.id = i.parent_id
	LEFT JOIN labs l ON l.id = i.holder_lab_id`;

/** The public shape of an item in every JSON answer. */
export function itemView(r: ItemRow) {
	return {
		code: r.code,
		kind: r.kind,
		collection: r.prefix,
		collectionName: r.collection_name,
		parentCode: r.parent_code,
		depth: r.depth,
		description: r.description,
		massUg: r.mass_ug,
		initialMassUg: r.initial_mass_ug,
		uUg: r.mass_u_ug,
		expandedUg: r.mass_u_ug === null ? null : 2 * r.mass_u_ug,
		state: r.state,
		holder: r.holder_lab_id === null ? { kind: 'facility' as const, labId: null, name: 'Facility' } : { kind: 'lab' as const, labId: r.holder_lab_id, name: r.holder_name ?? '' },
		container: r.container,
		storagePlace: r.storage_place,
		provenance: r.provenance,
		createdAt: new Date(r.created_at).toISOString()
	};
}
export type ItemView = ReturnType<typeof itemView>;

/**
 * Finds a visible item by its code; an unknown code and an item out of the viewer's sight get
 * the same 404, so a guessed code confirms nothing. `lock` takes the row lock for a change.
 */
export async function findItem(sq: Sequelize, who: Viewer, codeText: string, opts: { t?: Transaction; lock?: boolean } = {}): Promise<ItemRow> {
	const code = codeOrProblem(codeText);
	const rows = await sq.query<ItemRow>(
		`SELECT ${ITEM_COLUMNS} FROM ${ITEM_FROM} WHERE i.code = :code${opts.lock ? ' FOR UPDATE OF i' : ''}`,
		{ type: QueryTypes.SELECT, replacements: { code }, transaction: opts.t }
	);
	const row = rows[0];
	if (!row || !canSeeLab(who, row.holder_lab_id)) throw new ApiProblem(404, 'not_found', `No item ${code} is visible to you.`);
	return row;
}

/** Takes `n` consecutive serials of a collection (gapless: the counter row is locked until commit). */
export async function takeSerials(sq: Sequelize, t: Transaction, collectionId: string, n: number): Promise<number> {
	const [row] = await sq.query<{ first: number }>(
		'UPDATE collections SET next_serial = next_serial + :n WHERE id = :id RETURNING next_serial - :n AS first',
		{ type: QueryTypes.SELECT, replacements: { n, id: collectionId }, transaction: t }
	);
	return Number(row.first);
}
