import { createHash } from 'node:crypto';
import { ApiProblem } from '../api';
import { defaultTarget, getObject, storageUnavailable, type StorageTarget } from './objects';
import type { DocumentRow } from './store';

// A document's download: its bytes checked against the SHA-256 and size recorded at upload before
// any is sent, with the headers of the answer.

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
