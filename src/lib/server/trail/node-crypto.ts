// SHA-256 and Ed25519 from node's own crypto, for the shared verification rules (trail-verify.ts).
import { createHash, createPublicKey, hash, verify, type KeyObject } from 'node:crypto';
import type { TrailCrypto } from '../../domain/trail-verify';

const oneShot: (m: Uint8Array) => Uint8Array = typeof hash === 'function' ? (m) => hash('sha256', m, 'buffer') as unknown as Buffer : (m) => createHash('sha256').update(m).digest();
const keys = new Map<string, KeyObject>();

export const nodeTrailCrypto: TrailCrypto = {
	sha256: (messages) => messages.map(oneShot),
	verifyEd25519(spki, signature, message) {
		const id = Buffer.from(spki).toString('base64');
		let key = keys.get(id);
		if (!key) keys.set(id, (key = createPublicKey({ key: Buffer.from(spki), format: 'der', type: 'spki' })));
		return verify(null, message, key, signature);
	}
};
