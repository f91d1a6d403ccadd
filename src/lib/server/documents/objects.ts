import { createHash } from 'node:crypto';
import { Readable } from 'node:stream';
import { DeleteObjectCommand, GetObjectCommand, type S3Client } from '@aws-sdk/client-s3';
import { Upload } from '@aws-sdk/lib-storage';
import { ApiProblem } from '../api';
import { config } from '../config';
import { s3 } from '../storage';
import { ALLOWED_TYPES, megabytes } from './types';

// The bucket's side of documents: objects streamed in with their checksum and size, read and removed.

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

export async function getObject(target: StorageTarget, key: string) {
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
