// SHA-256 on a worker thread, for the bundle verifier in node: the verifier reads and checks the
// next events while the worker hashes those read before (trail-verify.ts, BundleVerifier).
import { Worker } from 'node:worker_threads';
import type { TrailCrypto } from '../../domain/trail-verify';
import { nodeTrailCrypto } from './node-crypto';

// Each job: one buffer and, for each message, the two pieces of it that the message is made of
// (offsets into the buffer, 4 a message). The answer: the 32-byte digests back to back. The worker
// joins the pieces itself, so the thread that reads does not copy them: where the bytes between
// the two pieces are not needed (an event line's stored hash), the first piece is moved next to the
// second in place.
/** The hashing of one job, on the worker. Self-contained: the worker is given its source text. */
function hashPiecesHere(all: Uint8Array, pieces: Uint32Array, n: number, one: (m: Uint8Array) => Uint8Array, pool: { bytes: Uint8Array }): Uint8Array {
	const out = new Uint8Array(32 * n);
	for (let i = 0; i < n; i++) {
		const a = pieces[4 * i];
		const b = pieces[4 * i + 1];
		const c = pieces[4 * i + 2];
		const d = pieces[4 * i + 3];
		if (c === d) {
			out.set(one(all.subarray(a, b)), 32 * i);
			continue;
		}
		if (c - (b - a) >= b) {
			// room between the pieces (the buffer is this job's own copy): the first is moved up to the second
			all.copyWithin(c - (b - a), a, b);
			out.set(one(all.subarray(c - (b - a), d)), 32 * i);
			continue;
		}
		const len = b - a + d - c;
		if (len > pool.bytes.length) pool.bytes = new Uint8Array(2 * len);
		pool.bytes.set(all.subarray(a, b), 0);
		pool.bytes.set(all.subarray(c, d), b - a);
		out.set(one(pool.bytes.subarray(0, len)), 32 * i);
	}
	return out;
}

const SOURCE = `
const { parentPort } = require('node:worker_threads');
const { hash, createHash } = require('node:crypto');
const one = typeof hash === 'function' ? (m) => hash('sha256', m, 'buffer') : (m) => createHash('sha256').update(m).digest();
const pool = { bytes: new Uint8Array(1 << 16) };
${hashPiecesHere.toString()}
parentPort.on('message', ({ id, buffer, pieces, n }) => {
	const out = hashPiecesHere(new Uint8Array(buffer), pieces, n, one, pool);
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
	const send = (buffer: ArrayBuffer, pieces: Uint32Array, n: number) => {
		const id = next++;
		return new Promise<Uint8Array>((resolve) => {
			waiting.set(id, resolve);
			worker.postMessage({ id, buffer, pieces, n }, [buffer, pieces.buffer as ArrayBuffer]);
		});
	};
	return {
		verifyEd25519: nodeTrailCrypto.verifyEd25519,
		sha256Pieces(buf, pieces, n) {
			// the bytes from the first piece to the last, copied once (the caller may reuse its buffer) and handed over
			let lo = Infinity;
			let hi = 0;
			for (let j = 0; j < 4 * n; j++) {
				if (pieces[j] < lo) lo = pieces[j];
				if (pieces[j] > hi) hi = pieces[j];
			}
			const copy = buf.slice(lo, hi);
			const rel = new Uint32Array(4 * n);
			for (let j = 0; j < 4 * n; j++) rel[j] = pieces[j] - lo;
			return send(copy.buffer, rel, n);
		},
		async sha256(messages) {
			if (!messages.length) return [];
			// each message as one piece and an empty one
			const total = messages.reduce((t, m) => t + m.length, 0);
			const copy = new Uint8Array(total);
			const pieces = new Uint32Array(4 * messages.length);
			let o = 0;
			messages.forEach((m, i) => {
				copy.set(m, o);
				pieces.set([o, o + m.length, o + m.length, o + m.length], 4 * i);
				o += m.length;
			});
			const out = await send(copy.buffer, pieces, messages.length);
			return messages.map((_, i) => out.subarray(32 * i, 32 * i + 32));
		},
		async close() {
			await worker.terminate();
		}
	};
}
