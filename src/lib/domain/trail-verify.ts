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
	/**
	 * Optional, for speed: SHA-256 of `n` messages each made of two pieces of `buf`, message i being
	 * buf[p[4i], p[4i+1]) followed by buf[p[4i+2], p[4i+3]); the digests back to back, 32 bytes each.
	 * It must have read what it needs of `buf` before it returns (the caller may reuse the buffer).
	 * Without it the verifier joins the pieces itself and calls sha256.
	 */
	sha256Pieces?(buf: Uint8Array, pieces: Uint32Array, n: number): Uint8Array | Promise<Uint8Array>;
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


// value (0–15) → its lower-case hex digit as a byte
const HEX_BYTE = utf8.encode(HEX);

/** Do the 64 bytes at line[at…] spell the 32 bytes digest[from…] in lower-case hex? No string is made. */
export function hexAt(line: Uint8Array, at: number, digest: Uint8Array, from = 0): boolean {
	for (let i = 0; i < 32; i++) {
		const d = digest[from + i];
		if (line[at + 2 * i] !== HEX_BYTE[d >> 4] || line[at + 2 * i + 1] !== HEX_BYTE[d & 15]) return false;
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

/**
 * A finding of the reading pass. `afterHash`: it was made at event `event` by a check that comes
 * after that event's hash check, so the hash is checked first. `at` may be earlier than `event`: a
 * checkpoint that no longer matches names the first event after the last one that did.
 */
interface ReadBreak extends Break {
	afterHash: boolean;
	event: number;
}

/** Events read from one buffer, waiting for their hashes to be checked. */
interface Batch {
	/** seq of the batch's first event */
	seq0: number;
	n: number;
	buf: Uint8Array;
	/** the two pieces each event's hash covers (its prev, then its event text), 4 offsets an event */
	pieces: Uint32Array;
	/** each event's stored hash as its 64 hex bytes */
	stored: Uint8Array;
	digests: Uint8Array | Promise<Uint8Array> | null;
}

const P_SEQ = utf8.encode('{"seq":');
const P_PREV = utf8.encode(',"prev":"');
const P_HASH = utf8.encode('","hash":"');
const P_EVENT = utf8.encode('","event":');
const P_BODY_SEQ = utf8.encode(',"seq":');
/** the shortest event line: {"seq":1,"prev":"<64>","hash":"<64>","event":{}} */
const MIN_EVENT_LINE = P_SEQ.length + 1 + P_PREV.length + 64 + P_HASH.length + 64 + P_EVENT.length + 3;
/** batches whose hashes may be under way at once */
const IN_FLIGHT = 4;

function startsAt(buf: Uint8Array, at: number, end: number, p: Uint8Array): boolean {
	if (at + p.length > end) return false;
	for (let i = 0; i < p.length; i++) if (buf[at + i] !== p[i]) return false;
	return true;
}

/** SHA-256 of two-piece messages: the provider's own sha256Pieces, or the pieces joined here. */
function hashPieces(crypto: TrailCrypto, buf: Uint8Array, pieces: Uint32Array, n: number): Uint8Array | Promise<Uint8Array> {
	if (crypto.sha256Pieces) return crypto.sha256Pieces(buf, pieces, n);
	let total = 0;
	for (let k = 0; k < n; k++) total += pieces[4 * k + 1] - pieces[4 * k] + pieces[4 * k + 3] - pieces[4 * k + 2];
	const pool = new Uint8Array(total);
	const messages: Uint8Array[] = new Array(n);
	let o = 0;
	for (let k = 0; k < n; k++) {
		const from = o;
		pool.set(buf.subarray(pieces[4 * k], pieces[4 * k + 1]), o);
		o += pieces[4 * k + 1] - pieces[4 * k];
		pool.set(buf.subarray(pieces[4 * k + 2], pieces[4 * k + 3]), o);
		o += pieces[4 * k + 3] - pieces[4 * k + 2];
		messages[k] = pool.subarray(from, o);
	}
	const pack = (digests: Uint8Array[]) => {
		const out = new Uint8Array(32 * n);
		for (let k = 0; k < n; k++) out.set(digests[k], 32 * k);
		return out;
	};
	const d = crypto.sha256(messages);
	return d instanceof Promise ? d.then(pack) : pack(d);
}

/**
 * Verifies a bundle as it streams in (`push` chunks of bytes, then `end`), in two passes over each
 * event. Reading (here, as the bytes arrive): each event's place (seq), its link (prev is the stored
 * hash of the event before), that its text says its seq, and, where a valid checkpoint stands,
 * that the stored hash is the signed one. Hashing (in batches of up to `batch` events, 2,000 by
 * default, at most IN_FLIGHT under way): SHA-256 over prev and the event's text must be the stored
 * hash. An SHA-256 that runs elsewhere (a worker thread, the browser's Web Crypto) thus hashes while
 * the next bytes are read. The first finding of any kind, by event, is the answer: an event is
 * trusted only when every check of it and of every event before it holds.
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
	private ended = false;
	/** seq of the next event line to read */
	private next = 0;
	/** the stored hash of the event read last: 64 bytes of prevBuf from prevAt */
	private prevBuf: Uint8Array = new Uint8Array(64);
	private prevAt = 0;
	/** the last checkpoint the chain led to (the anchor included), and all it led to */
	private lastGood = 0;
	private anchored = 0;
	private matchedSeqs: number[] = [];
	private readBreak: ReadBreak | null = null;
	private current: Batch | null = null;
	private inflight: Batch[] = [];
	/** seq of the next event whose hash is to be checked */
	private expect = 0;
	private headBuf: Uint8Array | null = null;
	private headAt = 0;
	private chainBreak: Break | null = null;
	/** events read so far, for a progress bar */
	eventsRead = 0;
	bytesRead = 0;

	constructor(crypto: TrailCrypto, opts: { batch?: number } = {}) {
		this.crypto = crypto;
		this.batchSize = Math.max(1, opts.batch ?? 2000);
	}

	/** Nothing more needs reading: a finding has been made. */
	get done(): boolean {
		return this.chainBreak !== null || this.readBreak !== null;
	}

	async push(bytes: Uint8Array): Promise<void> {
		this.bytesRead += bytes.length;
		if (this.done) return;
		// bytes read through a plain view (node's Buffer makes each of its slices a Buffer, which costs
		// more); newlines found by the caller's own object's indexOf (node's Buffer searches natively,
		// several times faster)
		const chunk = new Uint8Array(bytes.buffer, bytes.byteOffset, bytes.length);
		let from = 0;
		if (this.rest) {
			// the line begun in the chunk before ends in this one: only that line is joined
			const nl = bytes.indexOf(10);
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
			const r = this.line(line, 0, line.length);
			if (r) await r;
			from = nl + 1;
		}
		while (!this.done) {
			const nl = bytes.indexOf(10, from);
			if (nl < 0) break;
			// most lines are read without waiting: only a full batch, or the first event, waits
			const r = this.line(chunk, from, nl);
			if (r) await r;
			from = nl + 1;
		}
		if (!this.done && from < chunk.length) this.rest = chunk.slice(from);
		// the caller may reuse its bytes once this returns: what was read from them starts hashing now
		await this.startBatch();
	}

	private failRead(at: number, reason: string, afterHash = false, event = at) {
		if (!this.readBreak) this.readBreak = { at, reason, afterHash, event };
	}

	private line(buf: Uint8Array, s: number, e: number): void | Promise<void> {
		this.lineNo++;
		if (s === e) return;
		if (startsAt(buf, s, e, P_SEQ)) {
			if (!this.checkpointsReady) return this.readyCheckpoints().then(() => this.eventLine(buf, s, e));
			return this.eventLine(buf, s, e);
		}
		this.otherLine(buf.subarray(s, e));
	}

	private otherLine(line: Uint8Array): void {
		let o: Record<string, unknown>;
		try {
			o = JSON.parse(new TextDecoder().decode(line));
		} catch {
			return this.failRead(this.next || 1, `line ${this.lineNo} is not JSON`);
		}
		switch (o?.type) {
			case 'bundle': {
				if (o.format !== BUNDLE_FORMAT) return this.failRead(1, `not a Regolog trail bundle (format ${JSON.stringify(o.format)})`);
				const from = Number(o.from);
				const to = Number(o.to);
				this.header = { from, to, events: Number(o.events) };
				this.next = from;
				this.expect = from;
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
				if (Number(o.events) !== (this.header?.events ?? -1)) this.failRead(this.next, `the end line counts ${o.events} events, the header ${this.header?.events}`);
				return;
			default:
				return this.failRead(this.next || 1, `line ${this.lineNo} is of an unknown type`);
		}
	}

	/** Checks the bundle's checkpoints once, before the first event. */
	private async readyCheckpoints(): Promise<void> {
		if (this.checkpointsReady) return;
		this.checkpointsReady = true;
		if (!this.header) return this.failRead(1, 'the bundle has no header line');
		for (const cp of this.rawCheckpoints) {
			const c = await checkCheckpoint(cp, this.keys, this.crypto);
			if (c.ok) this.validCp.set(c.fields.seq, c.fields);
			else this.cpBreak = earliest(this.cpBreak, { at: cp.seq, reason: c.reason });
		}
		const { from } = this.header;
		let prev = GENESIS_HASH;
		if (from > 1) {
			const anchor = this.validCp.get(from - 1);
			if (!anchor) return this.failRead(from, `no valid signed checkpoint at event ${from - 1} anchors the bundle's first event`);
			prev = anchor.hash;
			this.lastGood = anchor.seq;
			this.anchored = 1;
		}
		this.prevBuf = utf8.encode(prev);
		this.prevAt = 0;
	}

	/** Reads the event line buf[s, e): {"seq":N,"prev":"<64>","hash":"<64>","event":<text>}, byte by byte. */
	private eventLine(buf: Uint8Array, s: number, e: number): void | Promise<void> {
		if (this.done) return;
		const seq = this.next;
		let i = s + P_SEQ.length;
		let n = 0;
		while (i < e && buf[i] >= 48 && buf[i] <= 57) n = n * 10 + (buf[i++] - 48);
		const prevAt = i + P_PREV.length;
		const hashAt = prevAt + 64 + P_HASH.length;
		const bodyAt = hashAt + 64 + P_EVENT.length;
		if (i === s + P_SEQ.length || !startsAt(buf, i, e, P_PREV) || !startsAt(buf, prevAt + 64, e, P_HASH) || !startsAt(buf, hashAt + 64, e, P_EVENT) || buf[e - 1] !== 125 /* } */ || bodyAt >= e - 1) {
			return this.failRead(seq, `event ${seq}: line ${this.lineNo} is not an event line of the bundle format`);
		}
		if (n !== seq) return this.failRead(seq, n > seq ? `event ${seq} is missing (event ${n} stands in its place)` : `event ${n} is out of place (event ${seq} expected)`);
		// the link: prev is the stored hash of the event before (whose own hash is checked with it)
		const prevBuf = this.prevBuf;
		const pa = this.prevAt;
		for (let j = 0; j < 64; j++) if (buf[prevAt + j] !== prevBuf[pa + j]) return this.failRead(seq, 'link to the previous event does not match');
		let b = this.current;
		if (b && b.buf !== buf) {
			b = null;
			const started = this.startBatch();
			if (started) return started.then(() => this.eventLine(buf, s, e));
		}
		if (!b) b = this.current = this.newBatch(buf, seq, Math.min(this.batchSize, Math.floor((buf.length - s) / MIN_EVENT_LINE) + 1));
		const k = b.n++;
		b.pieces[4 * k] = prevAt;
		b.pieces[4 * k + 1] = prevAt + 64;
		b.pieces[4 * k + 2] = bodyAt;
		b.pieces[4 * k + 3] = e - 1;
		const stored = b.stored;
		for (let j = 0; j < 64; j++) stored[64 * k + j] = buf[hashAt + j];
		this.prevBuf = stored;
		this.prevAt = 64 * k;
		this.next++;
		this.eventsRead++;
		// the event's own text must say its seq (the last top-level member but its subject)
		const at = lastIndexOf(buf, P_BODY_SEQ, bodyAt, e);
		if (at < 0 || !seqAt(buf, at + P_BODY_SEQ.length, seq)) this.failRead(seq, 'the event does not say its own seq', true);
		else {
			const cp = this.validCp.get(seq);
			if (cp) {
				if (!hexEq(buf, hashAt, cp.hash)) {
					const r = rewrittenBreak(seq, this.lastGood);
					this.failRead(r.at, r.reason, true, seq);
				} else {
					this.lastGood = seq;
					this.matchedSeqs.push(seq);
				}
			}
		}
		if (b.n === b.pieces.length / 4 || this.readBreak) return this.startBatch();
	}

	private newBatch(buf: Uint8Array, seq0: number, capacity: number): Batch {
		return { seq0, n: 0, buf, pieces: new Uint32Array(4 * capacity), stored: new Uint8Array(64 * capacity), digests: null };
	}

	/** Starts hashing the batch being read; checks the oldest batch under way once there are too many. */
	private startBatch(): Promise<void> | void {
		const b = this.current;
		this.current = null;
		if (b && b.n) {
			b.digests = hashPieces(this.crypto, b.buf, b.pieces, b.n);
			b.buf = EMPTY;
			this.inflight.push(b);
		}
		if (this.inflight.length > IN_FLIGHT) return this.checkOldest();
	}

	private async checkOldest(): Promise<void> {
		const b = this.inflight.shift()!;
		const digests = await b.digests!;
		b.digests = null;
		if (this.chainBreak) return;
		const stop = this.readBreak?.afterHash ? this.readBreak.event : Infinity;
		for (let k = 0; k < b.n; k++) {
			const seq = b.seq0 + k;
			if (!hexAt(b.stored, 64 * k, digests, 32 * k)) {
				this.chainBreak = { at: seq, reason: 'content does not match its hash' };
				return;
			}
			if (seq >= stop) return;
			this.headBuf = b.stored;
			this.headAt = 64 * k;
			this.expect = seq + 1;
		}
	}

	/** Checks every batch under way; then a finding of the reading pass is the answer, if there is one. */
	private async drain(): Promise<void> {
		await this.startBatch();
		while (this.inflight.length) await this.checkOldest();
		if (!this.chainBreak && this.readBreak) this.chainBreak = { at: this.readBreak.at, reason: this.readBreak.reason };
	}

	async end(): Promise<BundleResult> {
		if (!this.done && this.rest && this.rest.length) {
			const partial = this.rest;
			this.rest = null;
			if (startsAt(partial, 0, partial.length, P_SEQ)) this.failRead(this.next, `the bundle ends in the middle of event ${this.next}`);
			else this.failRead(this.next, `the bundle ends in the middle of line ${this.lineNo + 1}`);
		}
		if (!this.checkpointsReady && !this.done) await this.readyCheckpoints();
		const h = this.header;
		if (!this.done && h) {
			if (!this.ended) this.failRead(this.next, `the bundle ends before its end line: events from ${this.next} on are missing`);
			else if (this.next !== h.to + 1) this.failRead(this.next, `event ${this.next} is missing`);
		}
		await this.drain();
		const found = earliest(this.chainBreak, this.cpBreak);
		const from = h?.from ?? null;
		const first = from ?? 1;
		const chainTo = this.chainBreak ? this.chainBreak.at : Infinity;
		return {
			ok: found === null,
			events: found ? Math.max(0, found.at - first) : this.expect - first,
			firstBrokenAt: found?.at ?? null,
			...(found ? { reason: found.reason } : {}),
			from,
			to: h?.to ?? null,
			checkpoints: { valid: this.validCp.size, total: this.rawCheckpoints.length, matched: this.anchored + this.matchedSeqs.filter((s) => s < chainTo).length },
			head: this.headBuf && this.expect > first ? new TextDecoder().decode(this.headBuf.subarray(this.headAt, this.headAt + 64)) : null
		};
	}
}

/** Are the 64 bytes at buf[at…] the characters of hex? */
function hexEq(buf: Uint8Array, at: number, hex: string): boolean {
	if (hex.length !== 64 || at + 64 > buf.length) return false;
	for (let i = 0; i < 64; i++) if (buf[at + i] !== hex.charCodeAt(i)) return false;
	return true;
}

const EMPTY = new Uint8Array(0);

/** The last place of `needle` in hay[from, end). */
function lastIndexOf(hay: Uint8Array, needle: Uint8Array, from: number, end: number): number {
	const first = needle[0];
	outer: for (let i = end - needle.length; i >= from; i--) {
		if (hay[i] !== first) continue;
		for (let j = 1; j < needle.length; j++) if (hay[i + j] !== needle[j]) continue outer;
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
