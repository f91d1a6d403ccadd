import { randomUUID } from 'node:crypto';
import { QueryTypes, type Sequelize, type Transaction } from 'sequelize';
import { ApiProblem } from '../api';
import { config } from '../config';
import { appendTrail } from '../trail';
import { trailActor, type Who } from '../registry/common';
import { subjectById, type Subject, type SubjectType } from './subjects';
import { contentTypeFor, megabytes, OFFER_DOCUMENT_KINDS, type DocumentKind } from './types';
import { defaultTarget, deleteObject, putStream, type StorageTarget } from './objects';

/**
 * Document records: storing one (object, then record and trail event), who may see it, finding and
 * listing. File types are in types.ts, the bucket's side in objects.ts, verified downloads in
 * download.ts; their names are exported here too, for code that imports them from this module.
 */
export { DOCUMENT_KINDS, OFFER_DOCUMENT_KINDS, ALLOWED_TYPES, contentTypeFor, allowedList, megabytes, type DocumentKind } from './types';
export { defaultTarget, storageUnavailable, putStream, deleteObject, type StorageTarget } from './objects';
export { openVerified, attachmentHeader, downloadResponse } from './download';

export interface NewDocument {
	subject: Subject;
	kind: DocumentKind;
	name: string;
	description?: string;
	/** the declared content type of the body */
	contentType: string | null;
	/** the declared length, when known: refused at once when above the limit */
	declaredLength?: number | null;
	body: AsyncIterable<Uint8Array> | Iterable<Uint8Array> | ReadableStream<Uint8Array>;
	/** the document's id, when the caller needs it before the record exists */
	id?: string;
}

export interface DocumentRow {
	id: string;
	object_key: string;
	original_name: string;
	content_type: string;
	size_bytes: number;
	sha256: string;
	kind: DocumentKind;
	description: string;
	lab_id: string | null;
	subject_type: SubjectType;
	subject_id: string;
	uploaded_by: string | null;
	uploaded_by_label?: string | null;
	uploaded_at: Date;
}

export function documentView(d: DocumentRow) {
	return {
		id: d.id,
		name: d.original_name,
		contentType: d.content_type,
		sizeBytes: Number(d.size_bytes),
		sha256: d.sha256,
		kind: d.kind,
		description: d.description,
		labId: d.lab_id,
		subject: { type: d.subject_type, id: d.subject_id },
		uploadedBy: d.uploaded_by_label ?? null,
		uploadedAt: new Date(d.uploaded_at).toISOString(),
		href: `/api/documents/${d.id}/file`
	};
}
export type DocumentView = ReturnType<typeof documentView>;

/**
 * Stores a document: the object first, then its record and trail event in one transaction, so no
 * record ever points to a missing object. When the record cannot be written the object is removed
 * again (or, failing that, by the clean-up task). `extra` runs inside the same transaction.
 */
export async function storeDocument(
	sq: Sequelize,
	who: Who,
	doc: NewDocument,
	opts: { target?: StorageTarget; maxBytes?: number; extra?: (t: Transaction, row: DocumentRow) => Promise<void> } = {}
): Promise<DocumentRow> {
	const target = opts.target ?? defaultTarget();
	const maxBytes = opts.maxBytes ?? config.documents.maxBytes;
	const name = doc.name.trim().replace(/[\u0000-\u001f\\/]+/g, '_').slice(0, 255);
	if (!name) throw new ApiProblem(400, 'invalid_query', 'Give the file a name with name=.', { name: 'is required' });
	const description = (doc.description ?? '').trim();
	if (description.length > 500) throw new ApiProblem(422, 'invalid_input', 'The description is longer than 500 characters.', { description: 'at most 500 characters' });
	const contentType = contentTypeFor(doc.contentType, name);
	if (doc.declaredLength != null && doc.declaredLength > maxBytes) {
		throw new ApiProblem(413, 'too_large', `The file (${megabytes(doc.declaredLength)}) is larger than the limit of ${megabytes(maxBytes)}; nothing was saved.`, { file: `larger than ${megabytes(maxBytes)}` });
	}
	const id = doc.id ?? randomUUID();
	const key = `documents/${randomUUID()}`;
	const { sha256, sizeBytes } = await putStream(target, key, contentType, doc.body, maxBytes);
	// a lab member's document belongs to their lab; staff documents belong to the facility and follow their subject
	const labId = who.role === 'lab_member' ? who.labId : null;
	try {
		return await sq.transaction(async (t) => {
			const [row] = await sq.query<DocumentRow>(
				`INSERT INTO documents (id, object_key, original_name, content_type, size_bytes, sha256, kind, description, lab_id, subject_type, subject_id, uploaded_by)
				 VALUES (:id, :key, :name, :contentType, :sizeBytes, :sha256, :kind, :description, :labId, :subjectType, :subjectId, :by) RETURNING *`,
				{
					type: QueryTypes.SELECT,
					transaction: t,
					replacements: { id, key, name, contentType, sizeBytes, sha256, kind: doc.kind, description, labId, subjectType: doc.subject.type, subjectId: doc.subject.id, by: who.id }
				}
			);
			await appendTrail(sq, t, {
				actor: trailActor(who),
				action: 'document.stored',
				subjectType: 'document',
				subjectId: id,
				after: { name, contentType, sizeBytes, sha256, kind: doc.kind, labId, subject: { type: doc.subject.type, id: doc.subject.id, label: doc.subject.label } }
			});
			if (opts.extra) await opts.extra(t, row);
			return { ...row, uploaded_by_label: who.label };
		});
	} catch (e) {
		await deleteObject(target, key);
		throw e;
	}
}

const DOC_SELECT = `SELECT d.*, u.email AS uploaded_by_label FROM documents d LEFT JOIN users u ON u.id = d.uploaded_by`;

/**
 * May this viewer see this document? Staff see every document. A lab member sees their own lab's
 * documents, the facility's documents on a subject they can see, and the facility's photos,
 * chromatograms and characterisation of an item on offer (stored at the facility, not a blank: the
 * offer's own rule); never another lab's, even on an item their lab holds now.
 */
export async function canSeeDocument(sq: Sequelize, who: Pick<Who, 'role' | 'labId'>, d: DocumentRow): Promise<boolean> {
	if (who.role !== 'lab_member') return true;
	if (d.lab_id !== null) return d.lab_id === who.labId;
	if (d.subject_type === 'item' && OFFER_DOCUMENT_KINDS.includes(d.kind) && (await itemOnOffer(sq, d.subject_id))) return true;
	const subject = await subjectById(sq, d.subject_type, d.subject_id);
	return subject !== null && subject.labId !== null && subject.labId === who.labId;
}

/** Is the item on offer now (the offer's rule: stored at the facility, and not a blank)? */
async function itemOnOffer(sq: Sequelize, id: string): Promise<boolean> {
	const rows = await sq.query(`SELECT 1 FROM items WHERE id = :id AND state = 'stored' AND holder_lab_id IS NULL AND kind <> 'blank'`, { type: QueryTypes.SELECT, replacements: { id } });
	return rows.length > 0;
}

/** A document by id as the viewer may see it; an unknown id and one out of sight get the same 404. */
export async function findDocument(sq: Sequelize, who: Pick<Who, 'role' | 'labId'>, id: string): Promise<DocumentRow> {
	const [row] = await sq.query<DocumentRow>(`${DOC_SELECT} WHERE d.id = :id`, { type: QueryTypes.SELECT, replacements: { id } });
	if (!row || !(await canSeeDocument(sq, who, row))) throw new ApiProblem(404, 'not_found', 'No such document is visible to you.');
	return row;
}

/** The documents of a subject the viewer can already see. */
export async function listDocuments(sq: Sequelize, who: Pick<Who, 'role' | 'labId'>, subject: Subject): Promise<DocumentRow[]> {
	const lab = who.role === 'lab_member' ? ' AND (d.lab_id IS NULL OR d.lab_id = :lab)' : '';
	return sq.query<DocumentRow>(`${DOC_SELECT} WHERE d.subject_type = :type AND d.subject_id = :id${lab} ORDER BY d.uploaded_at DESC, d.id`, {
		type: QueryTypes.SELECT,
		replacements: { type: subject.type, id: subject.id, lab: who.labId }
	});
}
