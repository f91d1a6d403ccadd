// SHA-256 and Ed25519 from Web Crypto (crypto.subtle), for the shared verification rules
// (src/lib/domain/trail-verify.ts) in the browser. Node has the same API, so the tests run it too.
import type { TrailCrypto } from '../domain/trail-verify';

type Bytes = Uint8Array<ArrayBuffer>;

export const webTrailCrypto: TrailCrypto = {
	async sha256(messages) {
		const out = await Promise.all(messages.map((m) => crypto.subtle.digest('SHA-256', m as Bytes)));
		return out.map((d) => new Uint8Array(d));
	},
	async verifyEd25519(spki, signature, message) {
		const key = await crypto.subtle.importKey('spki', spki as Bytes, { name: 'Ed25519' }, false, ['verify']);
		return crypto.subtle.verify({ name: 'Ed25519' }, key, signature as Bytes, message as Bytes);
	}
};
