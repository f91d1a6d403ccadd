import { QueryTypes, type Sequelize } from 'sequelize';
import { ApiProblem, pathId } from '../api';
import { canSeeLab, type Viewer } from '../auth/scope';
import { findItem } from '../registry/common';
import { itemPath } from '../../domain/codes';

/** What a document can be attached to (the documents.subject_type check lists the same). */
export const SUBJECT_TYPES = ['item', 'blank', 'handling_session', 'transfer', 'request', 'usage_report', 'blank_control_report'] as const;
export type SubjectType = (typeof SUBJECT_TYPES)[number];

export const SUBJECT_LABELS: Record<SubjectType, string> = {
	item: 'item',
	blank: 'blank',
	handling_session: 'handling session',
	transfer: 'transfer',
	request: 'allocation request',
	usage_report: 'usage report',
	blank_control_report: 'blank-control report'
};

/** A subject as the documents see it: its id, the lab it belongs to (null: the facility), a label and a page. */
export interface Subject {
	type: SubjectType;
	id: string;
	labId: string | null;
	label: string;
	href: string | null;
}

/**
 * How one subject type is found. `find` looks a reference (a code or an id) up as the viewer may
 * see it and answers 404 otherwise; `byId` reads a stored subject id without a viewer, so a
 * document's visibility can follow its subject's.
 */
export interface SubjectResolver {
	find(sq: Sequelize, who: Viewer, ref: string): Promise<Subject>;
	byId(sq: Sequelize, id: string): Promise<Subject | null>;
}

const RESOLVERS = new Map<SubjectType, SubjectResolver>();

/** Makes a subject type attachable. Handling sessions, transfers, requests and usage reports register here when their tables exist. */
export function registerSubject(type: SubjectType, resolver: SubjectResolver): void {
	RESOLVERS.set(type, resolver);
}

export function subjectType(text: string | null): SubjectType {
	if (!text) throw new ApiProblem(400, 'invalid_query', `Say what the document belongs to with subject= (one of ${SUBJECT_TYPES.join(', ')}).`, { subject: 'is required' });
	if (!(SUBJECT_TYPES as readonly string[]).includes(text)) {
		throw new ApiProblem(400, 'invalid_query', `subject "${text.slice(0, 40)}" is not one of ${SUBJECT_TYPES.join(', ')}.`, { subject: 'is not a known subject type' });
	}
	return text as SubjectType;
}

function resolver(type: SubjectType): SubjectResolver {
	const r = RESOLVERS.get(type);
	if (!r) throw new ApiProblem(400, 'not_attachable', `Documents cannot be attached to a ${SUBJECT_LABELS[type]} yet.`, { subject: 'is not attachable yet' });
	return r;
}

export function findSubject(sq: Sequelize, who: Viewer, type: SubjectType, ref: string | null): Promise<Subject> {
	if (!ref) throw new ApiProblem(400, 'invalid_query', `Name the ${SUBJECT_LABELS[type]} with ref=.`, { ref: 'is required' });
	return resolver(type).find(sq, who, ref);
}

export async function subjectById(sq: Sequelize, type: SubjectType, id: string): Promise<Subject | null> {
	const r = RESOLVERS.get(type);
	return r ? r.byId(sq, id) : null;
}

interface ItemLite {
	id: string;
	code: string;
	kind: string;
	holder_lab_id: string | null;
}

function itemResolver(type: 'item' | 'blank'): SubjectResolver {
	const toSubject = (r: ItemLite): Subject => ({ type, id: r.id, labId: r.holder_lab_id, label: r.code, href: `/items/${itemPath(r.code)}` });
	return {
		async find(sq, who, ref) {
			const row = await findItem(sq, who, ref);
			if (type === 'blank' && row.kind !== 'blank') throw new ApiProblem(400, 'not_a_blank', `${row.code} is not a blank; attach the document to it as an item.`, { ref: 'is not a blank' });
			return toSubject(row);
		},
		async byId(sq, id) {
			const [row] = await sq.query<ItemLite>('SELECT id, code, kind, holder_lab_id FROM items WHERE id = :id', { type: QueryTypes.SELECT, replacements: { id } });
			return row ? toSubject(row) : null;
		}
	};
}

registerSubject('item', itemResolver('item'));
registerSubject('blank', itemResolver('blank'));
registerSubject('blank_control_report', {
	async find(sq, who, ref) {
		const id = pathId(ref, 'blank-control report');
		const s = await this.byId(sq, id);
		if (!s || !canSeeLab(who, s.labId)) throw new ApiProblem(404, 'not_found', 'No such blank-control report is visible to you.');
		return s;
	},
	async byId(sq, id) {
		const [row] = await sq.query<{ id: string; title: string; lab_id: string | null }>('SELECT id, title, lab_id FROM blank_control_reports WHERE id = :id', {
			type: QueryTypes.SELECT,
			replacements: { id }
		});
		return row ? { type: 'blank_control_report', id: row.id, labId: row.lab_id, label: row.title, href: `/reports/${row.id}` } : null;
	}
});

/**
 * A subject read from one table row: `sql` selects id, label and lab_id (null: the facility) for
 * `:id`. Visibility follows the lab: another lab's record answers 404 like an unknown one.
 */
function rowResolver(type: SubjectType, what: string, sql: string, href: (id: string) => string | null): SubjectResolver {
	return {
		async find(sq, who, ref) {
			const s = await this.byId(sq, pathId(ref, what));
			if (!s || !canSeeLab(who, s.labId)) throw new ApiProblem(404, 'not_found', `No such ${what} is visible to you.`);
			return s;
		},
		async byId(sq, id) {
			const [row] = await sq.query<{ id: string; label: string; lab_id: string | null }>(sql, { type: QueryTypes.SELECT, replacements: { id } });
			return row ? { type, id: row.id, labId: row.lab_id, label: row.label, href: href(row.id) } : null;
		}
	};
}

registerSubject('transfer', rowResolver('transfer', 'transfer', `SELECT id, 'CT-' || lpad(number::text, 4, '0') AS label, coalesce(to_lab_id, from_lab_id) AS lab_id FROM transfers WHERE id = :id`, (id) => `/transfers/${id}`));
registerSubject('request', rowResolver('request', 'allocation request', `SELECT id, 'AR-' || lpad(number::text, 4, '0') AS label, lab_id FROM allocation_requests WHERE id = :id`, (id) => `/requests/${id}`));
registerSubject('usage_report', rowResolver('usage_report', 'usage report', `SELECT u.id, 'usage of ' || i.code AS label, u.lab_id FROM usage_reports u JOIN items i ON i.id = u.item_id WHERE u.id = :id`, () => null));
registerSubject('handling_session', rowResolver('handling_session', 'handling session', `SELECT id, 'session ' || to_char(started_at AT TIME ZONE 'UTC', 'YYYY-MM-DD HH24:MI') AS label, NULL::uuid AS lab_id FROM handling_sessions WHERE id = :id`, () => '/handling'));
