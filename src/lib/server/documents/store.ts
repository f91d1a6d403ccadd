import { createHash, randomUUID } from 'node:crypto';
import { Readable } from 'node:stream';
import { DeleteObjectCommand, GetObjectCommand, type S3Client } from '@aws-sdk/client-s3';
import { Upload } from '@aws-sdk/lib-storage';
import { QueryTypes, type Sequelize, type Transaction } from 'sequelize';
import { ApiProblem } from '../api';
import { config } from '../config';
import { s3 } from '../storage';
import { appendTrail } from '../trail';
import { trailActor, type Who } from '../registry/common';
import { subjectById, type Subject, type SubjectType } from './subjects';

/** The kinds of document a lab or the facility attaches. */
export const DOCUMENT_KINDS = ['blank_control_report', 'chromatogram', 'photo', 'shipping_form', 'other'] as const;
export type DocumentKind = (typeof DOCUMENT_KINDS)[number];

const isText = (head: Uint8Array): boolean => {
	if (head.includes(0)) return false;
	try {
		new TextDecoder('utf-8', { fatal: true }).decode(head, { stream: true });
		return true;
	} catch {
		return false;
	}
};
const startsWith = (head: Uint8Array, ...bytes: number[]) => bytes.every((b, i) => head[i] === b);

/**
 * The content types Regolog stores, with the file endings that imply them and a cheap check of
 * the first bytes (the formats' own signatures: PDF "%PDF-", PNG's eight-byte signature, JPEG's
 * SOI marker, TIFF's byte-order header; text must be UTF-8 without NUL bytes).
 */
export const ALLOWED_TYPES: Record<string, { label: string; endings: string[]; sniff: (head: Uint8Array) => boolean }> = {
	'application/pdf': { label: 'PDF', endings: ['pdf'], sniff: (h) => startsWith(h, 0x25, 0x50, 0x44, 0x46, 0x2d) },
	'image/png': { label: 'PNG image', endings: ['png'], sniff: (h) => startsWith(h, 0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a) },
	'image/jpeg': { label: 'JPEG image', endings: ['jpg', 'jpeg'], sniff: (h) => startsWith(h, 0xff, 0xd8, 0xff) },
	'image/tiff': { label: 'TIFF image', endings: ['tif', 'tiff'], sniff: (h) => startsWith(h, 0x49, 0x49, 0x2a, 0x00) || startsWith(h, 0x4d, 0x4d, 0x00, 0x2a) },
	'text/csv': { label: 'CSV table', endings: ['csv'], sniff: isText },
	'text/plain': { label: 'plain text', endings: ['txt'], sniff: isText }
};

/** The content type of an upload: the declared one, or the file ending's when the browser declared none. */
export function contentTypeFor(declared: string | null, name: string): string {
	const type = (declared ?? '').split(';')[0].trim().toLowerCase();
	if (type && type !== 'application/octet-stream' && type !== 'application/vnd.ms-excel') {
		if (!ALLOWED_TYPES[type]) throw new ApiProblem(415, 'unsupported_media_type', `Files of type ${type} are not stored. Allowed: ${allowedList()}.`, { file: 'type not allowed' });
		return type;
	}
	const ending = name.toLowerCase().split('.').pop() ?? '';
	const found = Object.entries(ALLOWED_TYPES).find(([, t]) => t.endings.includes(ending));
	if (!found) throw new ApiProblem(415, 'unsupported_media_type', `"${name}" has no recognised type. Allowed: ${allowedList()}.`, { file: 'type not allowed' });
	return found[0];
}

export function allowedList(): string {
	return Object.values(ALLOWED_TYPES).map((t) => `${t.label} (.${t.endings.join(', .')})`).join(', ');
}

export function megabytes(bytes: number): string {
	return `${(bytes / 1024 / 1024).toFixed(bytes % (1024 * 1024) === 0 ? 0 : 1)} MB`;
}

export interface StorageTarget {
	s3: S3Client;
	bucket: string;
}
export const defaultTarget = (): StorageTarget => ({ s3: s3(), bucket: config.storage.bucket });

export function storageUnavailable(e: unknown): ApiProblem {
	const err = e as { name?: string; code?: string; message?: string };
	console.error('[regolog] object storage failed:', err?.name ?? err?.code, err?.message);
	return new ApiProblem(503, 'storage_unavailable', 'The document store is not reachable at the moment, so nothing was saved. Try again shortly.');
}

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

const HEAD_BYTES = 512;

/**
 * Streams a body to the bucket through lib-storage's Upload (multipart above 5 MB, so a large file
 * is never held whole), computing its SHA-256 and size on the way and refusing it as soon as it
 * passes `maxBytes`. The first bytes are checked against the declared type before anything is sent.
 */
export async function putStream(
	target: StorageTarget,
	key: string,
	contentType: string,
	body: AsyncIterable<Uint8Array> | Iterable<Uint8Array> | ReadableStream<Uint8Array>,
	maxBytes: number
): Promise<{ sha256: string; sizeBytes: number }> {
	const source: AsyncIterable<Uint8Array> = body instanceof ReadableStream ? Readable.fromWeb(body as never) : Readable.from(body, { objectMode: true });
	const it = source[Symbol.asyncIterator]();
	const tooLarge = () => new ApiProblem(413, 'too_large', `The file is larger than the limit of ${megabytes(maxBytes)}; nothing was saved.`, { file: `larger than ${megabytes(maxBytes)}` });
	// the head, for the type check
	const head: Uint8Array[] = [];
	let headLength = 0;
	let done = false;
	try {
		while (headLength < HEAD_BYTES) {
			const r = await it.next();
			if (r.done) {
				done = true;
				break;
			}
			head.push(r.value);
			headLength += r.value.length;
			if (headLength > maxBytes) throw tooLarge();
		}
	} catch (e) {
		if (e instanceof ApiProblem) throw e;
		throw bodyProblem(e, maxBytes);
	}
	const headBytes = Buffer.concat(head);
	if (headBytes.length === 0) throw new ApiProblem(422, 'empty_file', 'The file is empty; nothing was saved.', { file: 'is empty' });
	if (!ALLOWED_TYPES[contentType].sniff(headBytes.subarray(0, HEAD_BYTES))) {
		throw new ApiProblem(415, 'type_mismatch', `The file does not look like a ${ALLOWED_TYPES[contentType].label}: its first bytes do not match that format. Nothing was saved.`, { file: 'content does not match its type' });
	}
	const hash = createHash('sha256');
	let size = 0;
	let problem: ApiProblem | null = null;
	async function* guarded() {
		size += headBytes.length;
		hash.update(headBytes);
		yield headBytes;
		if (done) return;
		while (true) {
			let r: IteratorResult<Uint8Array>;
			try {
				r = await it.next();
			} catch (e) {
				problem = bodyProblem(e, maxBytes);
				throw problem;
			}
			if (r.done) return;
			size += r.value.length;
			if (size > maxBytes) {
				problem = tooLarge();
				throw problem;
			}
			hash.update(r.value);
			yield Buffer.from(r.value);
		}
	}
	const upload = new Upload({
		client: target.s3,
		params: { Bucket: target.bucket, Key: key, Body: Readable.from(guarded()), ContentType: contentType },
		queueSize: 2,
		leavePartsOnError: false
	});
	try {
		await upload.done();
	} catch (e) {
		if (problem) throw problem;
		if (e instanceof ApiProblem) throw e;
		throw storageUnavailable(e);
	}
	return { sha256: hash.digest('hex'), sizeBytes: size };
}

function bodyProblem(e: unknown, maxBytes: number): ApiProblem {
	const status = (e as { status?: number })?.status;
	if (status === 413) return new ApiProblem(413, 'too_large', `The file is larger than the limit of ${megabytes(maxBytes)}; nothing was saved.`, { file: `larger than ${megabytes(maxBytes)}` });
	return new ApiProblem(400, 'upload_interrupted', 'The upload was interrupted before the whole file arrived; nothing was saved.');
}

export async function deleteObject(target: StorageTarget, key: string): Promise<void> {
	try {
		await target.s3.send(new DeleteObjectCommand({ Bucket: target.bucket, Key: key }));
	} catch (e) {
		// left for the clean-up task, which removes objects without a record
		console.error(`[regolog] could not remove object ${key} after a failed save:`, (e as Error)?.message);
	}
}

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
 * documents, and the facility's documents on a subject they can see; never another lab's, even on
 * an item their lab holds now.
 */
export async function canSeeDocument(sq: Sequelize, who: Pick<Who, 'role' | 'labId'>, d: DocumentRow): Promise<boolean> {
	if (who.role !== 'lab_member') return true;
	if (d.lab_id !== null) return d.lab_id === who.labId;
	const subject = await subjectById(sq, d.subject_type, d.subject_id);
	return subject !== null && subject.labId !== null && subject.labId === who.labId;
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

async function getObject(target: StorageTarget, key: string) {
	try {
		const r = await target.s3.send(new GetObjectCommand({ Bucket: target.bucket, Key: key }));
		return r.Body as Readable;
	} catch (e) {
		const name = (e as { name?: string })?.name;
		if (name === 'NoSuchKey' || name === 'NotFound') {
			throw new ApiProblem(502, 'object_missing', 'The file of this document is missing from the document store. Tell the curation team; the record is kept.');
		}
		throw storageUnavailable(e);
	}
}

function mismatch(d: DocumentRow, sha: string, size: number): ApiProblem {
	return new ApiProblem(
		502,
		'checksum_mismatch',
		`The stored file does not match the checksum recorded when it was uploaded (SHA-256 ${d.sha256.slice(0, 12)}…, ${d.size_bytes} bytes; found ${sha.slice(0, 12)}…, ${size} bytes). It was changed or damaged in storage, so it is not sent. Tell the curation team.`,
		undefined,
		{ expectedSha256: d.sha256, foundSha256: sha }
	);
}

const BUFFER_AT_MOST = 4 * 1024 * 1024;

/**
 * The document's bytes, verified against the recorded SHA-256 and size before the first byte is
 * sent. Files up to 4 MB are read once and held; larger ones are read twice (a verifying pass, then
 * the pass that is sent, hashed again and cut off should it differ), never whole in memory.
 */
export async function openVerified(d: DocumentRow, target: StorageTarget = defaultTarget()): Promise<ReadableStream<Uint8Array>> {
	const first = await getObject(target, d.object_key);
	const hash = createHash('sha256');
	let size = 0;
	const held: Buffer[] = [];
	const hold = Number(d.size_bytes) <= BUFFER_AT_MOST;
	try {
		for await (const chunk of first) {
			const b = chunk as Buffer;
			size += b.length;
			hash.update(b);
			if (hold && size <= BUFFER_AT_MOST) held.push(b);
		}
	} catch (e) {
		throw storageUnavailable(e);
	}
	const sha = hash.digest('hex');
	if (sha !== d.sha256 || size !== Number(d.size_bytes)) throw mismatch(d, sha, size);
	if (hold) {
		const all = Buffer.concat(held);
		return new ReadableStream({
			start(c) {
				c.enqueue(new Uint8Array(all));
				c.close();
			}
		});
	}
	const second = await getObject(target, d.object_key);
	const again = createHash('sha256');
	const iter = second[Symbol.asyncIterator]();
	return new ReadableStream<Uint8Array>({
		async pull(c) {
			const r = await iter.next();
			if (r.done) {
				if (again.digest('hex') !== d.sha256) c.error(new Error('the stored file changed while it was being sent'));
				else c.close();
				return;
			}
			again.update(r.value as Buffer);
			c.enqueue(new Uint8Array(r.value as Buffer));
		},
		cancel() {
			second.destroy();
		}
	});
}

/** Content-Disposition for a download, with the original name (RFC 6266, RFC 8187). */
export function attachmentHeader(name: string): string {
	const ascii = name.replace(/[^\x20-\x7e]|["\\]/g, '_');
	return `attachment; filename="${ascii}"; filename*=UTF-8''${encodeURIComponent(name)}`;
}

/** The download response: verified bytes with their digest (RFC 9530 Repr-Digest). */
export async function downloadResponse(d: DocumentRow, target?: StorageTarget): Promise<Response> {
	const body = await openVerified(d, target);
	return new Response(body, {
		headers: {
			'content-type': d.content_type,
			'content-length': String(d.size_bytes),
			'content-disposition': attachmentHeader(d.original_name),
			'repr-digest': `sha-256=:${Buffer.from(d.sha256, 'hex').toString('base64')}:`
		}
	});
}
