/**
 * The trail's verification rules (DESIGN.md §3.9), shared by the server's verifier, the
 * `regolog-verify` command and the offline page in the browser, so the three can never disagree.
 * Pure TypeScript: no database, framework or Node-only import. SHA-256 (FIPS 180-4) and Ed25519
 * (RFC 8032) come from the caller (`TrailCrypto`): node's crypto on the server and the command
 * line, the browser's own Web Crypto on the page.
 *
 * A bundle (GET /api/trail/export) is NDJSON, one object a line, in this order:
 *   {"type":"bundle","format":"regolog-trail-bundle/1","from":F,"to":T,"events":K,"exportedAt":"…"}
 *   {"type":"key","keyId":"…","publicKey":"-----BEGIN PUBLIC KEY-----…","validFrom":"…","validUntil":null|"…"}   (every key)
 *   {"type":"checkpoint","seq":S,"hash":"…","keyId":"…","signed":"…","signature":"…"}   (F − 1 ≤ S ≤ T)
 *   {"seq":N,"prev":"<64 hex>","hash":"<64 hex>","event":<the event's canonical JSON, as stored>}   (N = F…T)
 *   {"type":"end","events":K}
 * An event line is written in exactly that layout, so a verifier can take the hashed bytes (prev
 * followed by the event's text) straight out of the line without parsing the event.
 */

export const GENESIS_HASH = '0'.repeat(64);
export const BUNDLE_FORMAT = 'regolog-trail-bundle/1';
export const CHECKPOINT_TYPE = 'regolog.trail.checkpoint';

/**
 * RFC 8785 canonical JSON of a value that came out of JSON.parse (so: null, booleans, finite
 * numbers, strings without lone surrogates, arrays and plain objects). Same text as the
 * `canonicalize` package gives for such values: strings and numbers are serialised by
 * JSON.stringify (ECMAScript, which RFC 8785 §3.2.2 adopts), member names sorted by UTF-16 code
 * units (RFC 8785 §3.2.3, the default order of Array.prototype.sort). The trail test checks the two
 * agree on arbitrary JSON. It is the one canonical JSON of the verifiers, identical in node and the
 * browser because both run this code.
 */
export function canonicalParsed(v: unknown): string {
	if (v === null) return 'null';
	switch (typeof v) {
		case 'string':
			return JSON.stringify(v);
		case 'number':
			if (!Number.isFinite(v)) throw new Error(`${v} has no JSON form`);
			return JSON.stringify(v);
		case 'boolean':
			return v ? 'true' : 'false';
		case 'object':
			break;
		default:
			throw new Error(`a ${typeof v} has no JSON form`);
	}
	if (Array.isArray(v)) {
		let out = '[';
		for (let i = 0; i < v.length; i++) out += (i ? ',' : '') + canonicalParsed(v[i]);
		return out + ']';
	}
	const o = v as Record<string, unknown>;
	const keys = Object.keys(o).sort();
	let out = '{';
	for (let i = 0; i < keys.length; i++) out += (i ? ',' : '') + JSON.stringify(keys[i]) + ':' + canonicalParsed(o[keys[i]]);
	return out + '}';
}

/** A stored row as verification reads it: every column as text, `at` already in ISO 8601 UTC. */
export type RawRow = [seq: string, at: string, actorId: string | null, actorLabel: string, action: string, subjectType: string, subjectId: string, before: string | null, after: string | null, prevHash: string, hash: string];

/**
 * An event's canonical JSON rebuilt from its columns read as text: the members in RFC 8785 order
 * (action, actor, after, at, before, seq, subject), the same text as the server's canonicalEvent.
 */
export function canonicalRawRow(r: RawRow): string {
	return (
		'{"action":' + JSON.stringify(r[4]) +
		',"actor":{"id":' + (r[2] === null ? 'null' : JSON.stringify(r[2])) + ',"label":' + JSON.stringify(r[3]) +
		'},"after":' + (r[8] === null ? 'null' : canonicalParsed(JSON.parse(r[8]))) +
		',"at":' + JSON.stringify(r[1]) +
		',"before":' + (r[7] === null ? 'null' : canonicalParsed(JSON.parse(r[7]))) +
		',"seq":' + JSON.stringify(Number(r[0])) +
		',"subject":{"id":' + JSON.stringify(r[6]) + ',"type":' + JSON.stringify(r[5]) + '}}'
	);
}

// ── crypto supplied by the caller ────────────────────────────────────────────────────────────────

export interface TrailCrypto {
	/** SHA-256 of each message (32 bytes each), in order; may answer at once or later */
	sha256(messages: Uint8Array[]): Uint8Array[] | Promise<Uint8Array[]>;
	/** Ed25519 (RFC 8032) verification with a public key given as SPKI DER */
	verifyEd25519(spki: Uint8Array, signature: Uint8Array, message: Uint8Array): boolean | Promise<boolean>;
}

const utf8 = new TextEncoder();

export function base64ToBytes(s: string): Uint8Array {
	const bin = atob(s.replace(/\s+/g, ''));
	const out = new Uint8Array(bin.length);
	for (let i = 0; i < bin.length; i++) out[i] = bin.charCodeAt(i);
	return out;
}

/** The DER bytes of a PEM "PUBLIC KEY" block (SPKI, RFC 5280 §4.1). */
export function pemToDer(pem: string): Uint8Array {
	const m = /-----BEGIN PUBLIC KEY-----([\s\S]+?)-----END PUBLIC KEY-----/.exec(pem);
	if (!m) throw new Error('not a PEM public key');
	return base64ToBytes(m[1]);
}

const HEX = '0123456789abcdef';
export function bytesToHex(b: Uint8Array): string {
	let s = '';
	for (let i = 0; i < b.length; i++) s += HEX[b[i] >> 4] + HEX[b[i] & 15];
	return s;
}

// hex digit (lower case) → value, 255 for anything else
const NIBBLE = new Uint8Array(256).fill(255);
for (let i = 0; i < 16; i++) NIBBLE[HEX.charCodeAt(i)] = i;

/** Do the 64 bytes at line[at…] spell the 32-byte digest in lower-case hex? No string is made. */
export function hexAt(line: Uint8Array, at: number, digest: Uint8Array): boolean {
	for (let i = 0; i < 32; i++) {
		if (((NIBBLE[line[at + 2 * i]] << 4) | NIBBLE[line[at + 2 * i + 1]]) !== digest[i] || NIBBLE[line[at + 2 * i]] === 255 || NIBBLE[line[at + 2 * i + 1]] === 255) return false;
	}
	return true;
}

function isHex64(s: unknown): s is string {
	return typeof s === 'string' && /^[0-9a-f]{64}$/.test(s);
}

// ── checkpoints ──────────────────────────────────────────────────────────────────────────────────

export interface CheckpointFields {
	seq: number;
	hash: string;
	count: number;
	time: string;
	keyId: string;
}

/** The exact text a checkpoint's signature covers: RFC 8785 canonical JSON of its fields. */
export function checkpointText(f: CheckpointFields): string {
	return canonicalParsed({ type: CHECKPOINT_TYPE, seq: f.seq, hash: f.hash, count: f.count, time: f.time, keyId: f.keyId });
}

/** A checkpoint as the API and the bundle give it. */
export interface SignedCheckpoint {
	seq: number;
	hash: string;
	keyId: string;
	/** the exact UTF-8 text that was signed */
	signed: string;
	/** the Ed25519 signature, base64 */
	signature: string;
}

/** A public key as the API and the bundle give it. */
export interface PublicKeyEntry {
	keyId: string;
	/** SPKI, PEM */
	publicKey: string;
	validFrom: string;
	/** when the next key took over; null for the current key */
	validUntil: string | null;
}

export type CheckpointCheck = { ok: true; fields: CheckpointFields } | { ok: false; reason: string };

/**
 * Is a checkpoint what its key signed? The key must be known and valid at the checkpoint's time,
 * the signed text canonical and saying the checkpoint's own seq, hash and key, its count equal to
 * its seq (every event from 1 was there), and the Ed25519 signature must verify over that text.
 */
export async function checkCheckpoint(cp: SignedCheckpoint, keys: Map<string, PublicKeyEntry>, crypto: TrailCrypto): Promise<CheckpointCheck> {
	const key = keys.get(cp.keyId);
	if (!key) return { ok: false, reason: `checkpoint ${cp.seq} is signed by an unknown key ${JSON.stringify(cp.keyId)}` };
	let f: CheckpointFields & { type?: string };
	try {
		f = JSON.parse(cp.signed);
	} catch {
		return { ok: false, reason: `checkpoint ${cp.seq}: its signed text is not JSON` };
	}
	if (!f || typeof f !== 'object' || (f as { type?: string }).type !== CHECKPOINT_TYPE || canonicalParsed(f) !== cp.signed) {
		return { ok: false, reason: `checkpoint ${cp.seq}: its signed text is not a canonical checkpoint` };
	}
	if (f.seq !== cp.seq || f.hash !== cp.hash || f.keyId !== cp.keyId || !isHex64(f.hash)) {
		return { ok: false, reason: `checkpoint ${cp.seq}: its signed text names another seq, hash or key` };
	}
	if (f.count !== f.seq) return { ok: false, reason: `checkpoint ${cp.seq}: it counts ${f.count} events up to event ${f.seq}` };
	const t = Date.parse(f.time);
	if (!Number.isFinite(t) || t < Date.parse(key.validFrom) || (key.validUntil !== null && t >= Date.parse(key.validUntil))) {
		return { ok: false, reason: `checkpoint ${cp.seq}: made at ${f.time}, outside the validity of key ${cp.keyId}` };
	}
	let good = false;
	try {
		good = await crypto.verifyEd25519(pemToDer(key.publicKey), base64ToBytes(cp.signature), utf8.encode(cp.signed));
	} catch {
		good = false;
	}
	if (!good) return { ok: false, reason: `checkpoint ${cp.seq}: the signature does not verify with key ${cp.keyId}` };
	return { ok: true, fields: { seq: f.seq, hash: f.hash, count: f.count, time: f.time, keyId: f.keyId } };
}

export function keyMap(keys: PublicKeyEntry[]): Map<string, PublicKeyEntry> {
	return new Map(keys.map((k) => [k.keyId, k]));
}

// ── findings ─────────────────────────────────────────────────────────────────────────────────────

export interface Break {
	/** the first event that cannot be trusted */
	at: number;
	reason: string;
}

/** The earlier of two findings (either may be missing). */
export function earliest(a: Break | null, b: Break | null): Break | null {
	if (!a) return b;
	if (!b) return a;
	return b.at < a.at ? b : a;
}

/**
 * A chain that no longer leads to a signed head was rewritten somewhere after the last checkpoint
 * it still matches (`lastGood`, 0 for none): the first event no signature vouches for any more is
 * the one after it. Which event between the two was changed first cannot be known without the
 * original, so this is the first event the verifier can name.
 */
export function rewrittenBreak(cpSeq: number, lastGood: number): Break {
	return {
		at: lastGood + 1,
		reason: `the chain no longer leads to the head signed at checkpoint ${cpSeq}: rewritten after ${lastGood ? `checkpoint ${lastGood}` : 'its start'}`
	};
}

/**
 * Matches the chain against the valid checkpoints: `hashAt(seq)` is the chain's hash at that seq
 * (undefined when the chain does not reach it). Answers the first checkpoint the chain no longer
 * leads to as a Break (rewrittenBreak), and the checkpoints checked.
 */
export function matchCheckpoints(valid: CheckpointFields[], hashAt: (seq: number) => string | undefined, lastGood = 0): { broken: Break | null; matched: number; lastGood: number } {
	let matched = 0;
	for (const cp of [...valid].sort((a, b) => a.seq - b.seq)) {
		const h = hashAt(cp.seq);
		if (h === undefined) continue;
		if (h !== cp.hash) return { broken: rewrittenBreak(cp.seq, lastGood), matched, lastGood };
		matched++;
		lastGood = cp.seq;
	}
	return { broken: null, matched, lastGood };
}

// ── bundles ──────────────────────────────────────────────────────────────────────────────────────

export interface BundleResult {
	ok: boolean;
	/** events verified intact (all when ok, otherwise those before the first broken one) */
	events: number;
	firstBrokenAt: number | null;
	reason?: string;
	from: number | null;
	to: number | null;
	/** checkpoints whose signature verified, and how many the bundle holds */
	checkpoints: { valid: number; total: number; matched: number };
	/** the hash of the last event verified */
	head: string | null;
}

interface Pending {
	seq: number;
	line: Uint8Array;
	prevAt: number;
	hashAt: number;
	bodyAt: number;
	message: Uint8Array;
}

const P_SEQ = utf8.encode('{"seq":');
const P_PREV = utf8.encode(',"prev":"');
const P_HASH = utf8.encode('","hash":"');
const P_EVENT = utf8.encode('","event":');
const P_BODY_SEQ = utf8.encode(',"seq":');

function startsAt(line: Uint8Array, at: number, p: Uint8Array): boolean {
	if (at + p.length > line.length) return false;
	for (let i = 0; i < p.length; i++) if (line[at + i] !== p[i]) return false;
	return true;
}

/**
 * Verifies a bundle as it streams in (`push` chunks of bytes, then `end`). Events are hashed in
 * batches (`batch`, 2,000 by default), so an asynchronous SHA-256 (Web Crypto) costs one wait per
 * batch. Keys and checkpoints come first in the bundle; each event is then checked for its place
 * (seq), its link (prev is the hash before it), its hash (SHA-256 over prev and the event's text),
 * and, where a valid checkpoint stands, that the chain still leads to the signed hash. The first
 * finding of any kind, by event, is the answer.
 */
export class BundleVerifier {
	private crypto: TrailCrypto;
	private batchSize: number;
	private rest: Uint8Array | null = null;
	private lineNo = 0;
	private header: { from: number; to: number; events: number } | null = null;
	private keys = new Map<string, PublicKeyEntry>();
	private rawCheckpoints: SignedCheckpoint[] = [];
	private validCp = new Map<number, CheckpointFields>();
	private cpBreak: Break | null = null;
	private checkpointsReady = false;
	private expect = 0;
	private prev: string | null = null;
	/** the previous event's hash: 64 bytes of prevLine from prevAt */
	private prevLine: Uint8Array = new Uint8Array(64);
	private prevAt = 0;
	private pending = 0;
	private lastGood = 0;
	private matched = 0;
	private chainBreak: Break | null = null;
	private ended = false;
	private batch: Pending[] = [];
	private inflight: { batch: Pending[]; digests: Uint8Array[] | Promise<Uint8Array[]> } | null = null;
	/** events read so far, for a progress bar */
	eventsRead = 0;
	bytesRead = 0;

	constructor(crypto: TrailCrypto, opts: { batch?: number } = {}) {
		this.crypto = crypto;
		this.batchSize = opts.batch ?? 2000;
	}

	get done(): boolean {
		return this.chainBreak !== null;
	}

	async push(bytes: Uint8Array): Promise<void> {
		this.bytesRead += bytes.length;
		if (this.chainBreak) return;
		// a plain view (node's Buffer makes each of its slices a Buffer, which costs more per line)
		const chunk = new Uint8Array(bytes.buffer, bytes.byteOffset, bytes.length);
		let from = 0;
		if (this.rest) {
			// the line begun in the chunk before ends in this one: only that line is joined
			const nl = chunk.indexOf(10);
			if (nl < 0) {
				const joined = new Uint8Array(this.rest.length + chunk.length);
				joined.set(this.rest);
				joined.set(chunk, this.rest.length);
				this.rest = joined;
				return;
			}
			const line = new Uint8Array(this.rest.length + nl);
			line.set(this.rest);
			line.set(chunk.subarray(0, nl), this.rest.length);
			this.rest = null;
			await this.line(line);
			if (this.chainBreak) return;
			from = nl + 1;
		}
		for (;;) {
			const nl = chunk.indexOf(10, from);
			if (nl < 0) break;
			await this.line(chunk.subarray(from, nl));
			if (this.chainBreak) return;
			from = nl + 1;
		}
		if (from < chunk.length) this.rest = chunk.slice(from);
	}

	private fail(at: number, reason: string) {
		if (!this.chainBreak) this.chainBreak = { at, reason };
	}

	private async line(line: Uint8Array): Promise<void> {
		this.lineNo++;
		if (line.length === 0) return;
		if (startsAt(line, 0, P_SEQ)) return this.eventLine(line);
		await this.flush();
		if (this.chainBreak) return;
		let o: Record<string, unknown>;
		try {
			o = JSON.parse(new TextDecoder().decode(line));
		} catch {
			return this.fail(this.expect || 1, `line ${this.lineNo} is not JSON`);
		}
		switch (o.type) {
			case 'bundle': {
				if (o.format !== BUNDLE_FORMAT) return this.fail(1, `not a Regolog trail bundle (format ${JSON.stringify(o.format)})`);
				const from = Number(o.from);
				const to = Number(o.to);
				this.header = { from, to, events: Number(o.events) };
				this.expect = from;
				if (from === 1) this.prev = GENESIS_HASH;
				return;
			}
			case 'key': {
				const k = o as unknown as PublicKeyEntry;
				this.keys.set(k.keyId, { keyId: k.keyId, publicKey: k.publicKey, validFrom: k.validFrom, validUntil: k.validUntil ?? null });
				return;
			}
			case 'checkpoint':
				this.rawCheckpoints.push({ seq: Number(o.seq), hash: String(o.hash), keyId: String(o.keyId), signed: String(o.signed), signature: String(o.signature) });
				return;
			case 'end':
				this.ended = true;
				if (Number(o.events) !== (this.header?.events ?? -1)) this.fail(this.expect, `the end line counts ${o.events} events, the header ${this.header?.events}`);
				return;
			default:
				return this.fail(this.expect || 1, `line ${this.lineNo} is of an unknown type`);
		}
	}

	/** Checks the bundle's checkpoints once, before the first event. */
	private async readyCheckpoints(): Promise<void> {
		if (this.checkpointsReady) return;
		this.checkpointsReady = true;
		if (!this.header) return this.fail(1, 'the bundle has no header line');
		for (const cp of this.rawCheckpoints) {
			const c = await checkCheckpoint(cp, this.keys, this.crypto);
			if (c.ok) this.validCp.set(c.fields.seq, c.fields);
			else this.cpBreak = earliest(this.cpBreak, { at: cp.seq, reason: c.reason });
		}
		const { from } = this.header;
		if (from > 1) {
			const anchor = this.validCp.get(from - 1);
			if (!anchor) return this.fail(from, `no valid signed checkpoint at event ${from - 1} anchors the bundle's first event`);
			this.prev = anchor.hash;
			this.lastGood = anchor.seq;
			this.matched++;
		}
		this.prevLine = utf8.encode(this.prev!);
		this.prevAt = 0;
	}

	private async eventLine(line: Uint8Array): Promise<void> {
		if (!this.checkpointsReady) await this.readyCheckpoints();
		if (this.chainBreak) return;
		// {"seq":N,"prev":"<64>","hash":"<64>","event":<body>}, checked byte by byte
		let i = P_SEQ.length;
		let seq = 0;
		while (i < line.length && line[i] >= 48 && line[i] <= 57) seq = seq * 10 + (line[i++] - 48);
		const prevAt = i + P_PREV.length;
		const hashAt = prevAt + 64 + P_HASH.length;
		const bodyAt = hashAt + 64 + P_EVENT.length;
		if (i === P_SEQ.length || !startsAt(line, i, P_PREV) || !startsAt(line, prevAt + 64, P_HASH) || !startsAt(line, hashAt + 64, P_EVENT) || line[line.length - 1] !== 125 /* } */ || bodyAt >= line.length - 1) {
			const at = this.expect + this.batch.length;
			return this.fail(at, `event ${at}: line ${this.lineNo} is not an event line of the bundle format`);
		}
		this.batch.push({ seq, line, prevAt, hashAt, bodyAt, message: EMPTY });
		this.pending += 64 + line.length - 1 - bodyAt;
		this.eventsRead++;
		if (this.batch.length >= this.batchSize) await this.flush(false);
	}

	/**
	 * Hashes the batch read so far and checks it. With `drain` false the hashing of this batch is
	 * only started, and the batch before is checked meanwhile: an SHA-256 that runs elsewhere (a
	 * worker thread, the browser's Web Crypto) then hashes one batch while the next is read.
	 */
	private async flush(drain = true): Promise<void> {
		const batch = this.batch;
		if (this.chainBreak) return;
		const previous = this.inflight;
		this.inflight = null;
		if (batch.length) {
			this.batch = [];
			this.inflight = { batch, digests: this.hashBatch(batch) };
		}
		if (previous) await this.check(previous);
		if (drain && this.inflight && !this.chainBreak) {
			const last = this.inflight;
			this.inflight = null;
			await this.check(last);
		}
	}

	private hashBatch(batch: Pending[]): Uint8Array[] | Promise<Uint8Array[]> {
		// the hashed bytes of every event of the batch (prev, then the event's text) side by side in one buffer
		const pool = new Uint8Array(this.pending);
		this.pending = 0;
		let o = 0;
		for (let k = 0; k < batch.length; k++) {
			const p = batch[k];
			const line = p.line;
			const end = line.length - 1;
			for (let i = 0; i < 64; i++) pool[o + i] = line[p.prevAt + i];
			pool.set(line.subarray(p.bodyAt, end), o + 64);
			p.message = pool.subarray(o, o + 64 + end - p.bodyAt);
			o += 64 + end - p.bodyAt;
		}
		return this.crypto.sha256(batch.map(messageOf));
	}

	private async check(job: { batch: Pending[]; digests: Uint8Array[] | Promise<Uint8Array[]> }): Promise<void> {
		const batch = job.batch;
		const digests = await job.digests;
		if (this.chainBreak) return;
		for (let k = 0; k < batch.length; k++) {
			const p = batch[k];
			const seq = this.expect;
			if (p.seq !== seq) return this.fail(seq, p.seq > seq ? `event ${seq} is missing (event ${p.seq} stands in its place)` : `event ${p.seq} is out of place (event ${seq} expected)`);
			// the link: prev is the hash of the event before
			const line = p.line;
			const prevLine = this.prevLine;
			const prevAt = this.prevAt;
			for (let i = 0; i < 64; i++) if (line[p.prevAt + i] !== prevLine[prevAt + i]) return this.fail(seq, 'link to the previous event does not match');
			if (!hexAt(line, p.hashAt, digests[k])) return this.fail(seq, 'content does not match its hash');
			// the event's own text must say its seq (the last top-level member but its subject)
			const s = lastIndexOf(line, P_BODY_SEQ, p.bodyAt);
			if (s < 0 || !seqAt(line, s + P_BODY_SEQ.length, seq)) return this.fail(seq, 'the event does not say its own seq');
			this.prevLine = line;
			this.prevAt = p.hashAt;
			const cp = this.validCp.get(seq);
			if (cp) {
				if (!hexEq(line.subarray(p.hashAt, p.hashAt + 64), cp.hash)) {
					const b = rewrittenBreak(seq, this.lastGood);
					return this.fail(b.at, b.reason);
				}
				this.lastGood = seq;
				this.matched++;
			}
			this.expect++;
		}
	}

	async end(): Promise<BundleResult> {
		if (!this.chainBreak && this.rest && this.rest.length) {
			const partial = this.rest;
			this.rest = null;
			await this.flush();
			const at = this.expect;
			if (startsAt(partial, 0, P_SEQ)) this.fail(at, `the bundle ends in the middle of event ${at}`);
			else this.fail(at, `the bundle ends in the middle of line ${this.lineNo + 1}`);
		}
		if (!this.checkpointsReady && !this.chainBreak) await this.readyCheckpoints();
		await this.flush();
		const h = this.header;
		if (!this.chainBreak && h) {
			if (!this.ended) this.fail(this.expect, `the bundle ends before its end line: events from ${this.expect} on are missing`);
			else if (this.expect !== h.to + 1) this.fail(this.expect, `event ${this.expect} is missing`);
		}
		const found = earliest(this.chainBreak, this.cpBreak);
		const from = h?.from ?? null;
		const first = from ?? 1;
		return {
			ok: found === null,
			events: found ? Math.max(0, found.at - first) : this.expect - first,
			firstBrokenAt: found?.at ?? null,
			...(found ? { reason: found.reason } : {}),
			from,
			to: h?.to ?? null,
			checkpoints: { valid: this.validCp.size, total: this.rawCheckpoints.length, matched: this.matched },
			head: this.expect > first ? new TextDecoder().decode(this.prevLine.subarray(this.prevAt, this.prevAt + 64)) : null
		};
	}
}

function hexEq(bytes: Uint8Array, hex: string): boolean {
	if (bytes.length !== hex.length) return false;
	for (let i = 0; i < hex.length; i++) if (bytes[i] !== hex.charCodeAt(i)) return false;
	return true;
}

const EMPTY = new Uint8Array(0);
const messageOf = (p: Pending) => p.message;

/** The last place of `needle` in hay[from…]. */
function lastIndexOf(hay: Uint8Array, needle: Uint8Array, from = 0): number {
	outer: for (let i = hay.length - needle.length; i >= from; i--) {
		for (let j = 0; j < needle.length; j++) if (hay[i + j] !== needle[j]) continue outer;
		return i;
	}
	return -1;
}

/** Do the bytes at body[at…] spell the decimal seq, followed by a comma? */
function seqAt(body: Uint8Array, at: number, seq: number): boolean {
	let n = 0;
	let i = at;
	while (body[i] >= 48 && body[i] <= 57) n = n * 10 + (body[i++] - 48);
	return i > at && n === seq && body[i] === 44 /* , */ && (body[at] !== 48 || i === at + 1);
}

/** Verifies a whole bundle held in memory (tests, small bundles). */
export async function verifyBundleBytes(bytes: Uint8Array, crypto: TrailCrypto): Promise<BundleResult> {
	const v = new BundleVerifier(crypto);
	await v.push(bytes);
	return v.end();
}
