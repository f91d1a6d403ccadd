// SHA-256 on a worker thread, for the bundle verifier in node: the verifier reads and checks one
// batch of events while the worker hashes the next (trail-verify.ts, BundleVerifier.flush).
import { Worker } from 'node:worker_threads';
import type { TrailCrypto } from '../../domain/trail-verify';
import { nodeTrailCrypto } from './node-crypto';

// each job: one buffer holding the messages back to back, and where each ends; the answer: the
// 32-byte digests back to back
const SOURCE = `
const { parentPort } = require('node:worker_threads');
const { hash, createHash } = require('node:crypto');
const one = typeof hash === 'function' ? (m) => hash('sha256', m, 'buffer') : (m) => createHash('sha256').update(m).digest();
parentPort.on('message', ({ id, buffer, offset, ends }) => {
	const all = new Uint8Array(buffer);
	const out = new Uint8Array(32 * ends.length);
	let from = offset;
	for (let i = 0; i < ends.length; i++) {
		out.set(one(all.subarray(from, ends[i])), 32 * i);
		from = ends[i];
	}
	parentPort.postMessage({ id, out }, [out.buffer]);
});`;

/** A TrailCrypto whose SHA-256 runs on a worker thread; close() ends the worker. */
export function workerTrailCrypto(): TrailCrypto & { close(): Promise<void> } {
	const worker = new Worker(SOURCE, { eval: true });
	worker.unref();
	let next = 0;
	const waiting = new Map<number, (out: Uint8Array) => void>();
	worker.on('message', ({ id, out }: { id: number; out: Uint8Array }) => {
		waiting.get(id)?.(out);
		waiting.delete(id);
	});
	return {
		verifyEd25519: nodeTrailCrypto.verifyEd25519,
		sha256(messages) {
			if (!messages.length) return [];
			const buffer = messages[0].buffer;
			// messages side by side in one buffer (as the verifier makes them) go as they are; others are copied once
			let contiguous = messages.every((m, i) => m.buffer === buffer && (i === 0 || m.byteOffset === messages[i - 1].byteOffset + messages[i - 1].length));
			let buf = buffer as ArrayBuffer;
			let offset = messages[0].byteOffset;
			if (!contiguous || buffer instanceof SharedArrayBuffer) {
				const total = messages.reduce((n, m) => n + m.length, 0);
				const copy = new Uint8Array(total);
				let o = 0;
				for (const m of messages) copy.set(m, (o += m.length) - m.length);
				buf = copy.buffer;
				offset = 0;
				contiguous = true;
			}
			const ends = new Uint32Array(messages.length);
			let at = offset;
			for (let i = 0; i < messages.length; i++) ends[i] = at += messages[i].length;
			const id = next++;
			return new Promise<Uint8Array[]>((resolve) => {
				waiting.set(id, (out) => resolve(Array.from({ length: messages.length }, (_, i) => out.subarray(32 * i, 32 * i + 32))));
				// the buffer goes to the worker (the verifier does not read the messages again)
				worker.postMessage({ id, buffer: buf, offset, ends }, [buf]);
			});
		},
		async close() {
			await worker.terminate();
		}
	};
}
