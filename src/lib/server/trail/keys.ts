// The trail's Ed25519 signing key (RFC 8032, node's own crypto). It lives outside the database:
// in REGOLOG_TRAIL_SIGNING_KEY (PKCS #8 PEM), or else in a key file under the data folder
// (REGOLOG_TRAIL_KEY_FILE, mode 0600), made on first use. The database keeps only public keys.
import { createHash, createPrivateKey, createPublicKey, generateKeyPairSync, sign, type KeyObject } from 'node:crypto';
import { chmodSync, existsSync, mkdirSync, readFileSync, renameSync, statSync, writeFileSync } from 'node:fs';
import { dirname } from 'node:path';
import { config } from '../config';

export interface SigningKey {
	keyId: string;
	privateKey: KeyObject;
	/** SPKI, PEM */
	publicKey: string;
	/** SHA-256 of the SPKI DER, hex: what a witness compares */
	fingerprint: string;
	source: 'environment' | 'file';
}

/** A key's id: the first 16 hex digits of the SHA-256 of its public key (SPKI DER). */
export function keyIdOf(publicKey: KeyObject): { keyId: string; fingerprint: string } {
	const fingerprint = createHash('sha256').update(publicKey.export({ type: 'spki', format: 'der' })).digest('hex');
	return { keyId: fingerprint.slice(0, 16), fingerprint };
}

function fromPrivate(privateKey: KeyObject, source: SigningKey['source']): SigningKey {
	if (privateKey.asymmetricKeyType !== 'ed25519') throw new Error('the trail signing key must be an Ed25519 key');
	const pub = createPublicKey(privateKey);
	return { ...keyIdOf(pub), privateKey, publicKey: String(pub.export({ type: 'spki', format: 'pem' })), source };
}

function writeKeyFile(file: string, privateKey: KeyObject): void {
	mkdirSync(dirname(file), { recursive: true, mode: 0o700 });
	const tmp = `${file}.${process.pid}.tmp`;
	writeFileSync(tmp, String(privateKey.export({ type: 'pkcs8', format: 'pem' })), { mode: 0o600 });
	renameSync(tmp, file);
}

let cached: { file: string; mtimeMs: number; key: SigningKey } | null = null;

/** The current signing key; the key file is made (0600) when there is none, and read again when it changed. */
export function signingKey(): SigningKey {
	const pem = config.trail.signingKey;
	if (pem) return fromPrivate(createPrivateKey(pem.replace(/\\n/g, '\n')), 'environment');
	const file = config.trail.keyFile;
	if (!existsSync(file)) writeKeyFile(file, generateKeyPairSync('ed25519').privateKey);
	const st = statSync(file);
	if ((st.mode & 0o077) !== 0) chmodSync(file, 0o600);
	if (cached && cached.file === file && cached.mtimeMs === st.mtimeMs) return cached.key;
	const key = fromPrivate(createPrivateKey(readFileSync(file, 'utf8')), 'file');
	cached = { file, mtimeMs: st.mtimeMs, key };
	return key;
}

/** A new key in place of the file's (the old private key is gone afterwards; its public key stays registered). */
export function replaceKeyFile(): SigningKey {
	if (config.trail.signingKey) throw new Error('the signing key comes from REGOLOG_TRAIL_SIGNING_KEY: rotate it there and restart');
	writeKeyFile(config.trail.keyFile, generateKeyPairSync('ed25519').privateKey);
	cached = null;
	return signingKey();
}

/** Ed25519 signature of the UTF-8 text, base64. */
export function signText(key: SigningKey, text: string): string {
	return sign(null, Buffer.from(text, 'utf8'), key.privateKey).toString('base64');
}
