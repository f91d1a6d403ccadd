import { describe, it, expect, afterAll } from 'vitest';
import { createHash, createPrivateKey, createPublicKey, generateKeyPairSync, sign } from 'node:crypto';
import canonicalize from 'canonicalize';
import fc from 'fast-check';
import {
	BundleVerifier,
	BUNDLE_FORMAT,
	bytesToHex,
	canonicalParsed,
	checkCheckpoint,
	checkpointText,
	GENESIS_HASH,
	keyMap,
	verifyBundleBytes,
	type PublicKeyEntry,
	type SignedCheckpoint,
	type TrailCrypto
} from '../../src/lib/domain/trail-verify';
import { nodeTrailCrypto } from '../../src/lib/server/trail/node-crypto';
import { webTrailCrypto } from '../../src/lib/trail/web-crypto';
import { workerTrailCrypto } from '../../src/lib/server/trail/hash-worker';

const enc = new TextEncoder();
const hex = (s: string) => Uint8Array.from(Buffer.from(s, 'hex'));
// the command line's provider: SHA-256 on a worker thread, given each message as two pieces of a buffer
const onWorker = workerTrailCrypto();
afterAll(() => onWorker.close());
const CRYPTOS: [string, TrailCrypto][] = [
	['node:crypto', nodeTrailCrypto],
	['Web Crypto', webTrailCrypto],
	['node:crypto on a worker thread', onWorker]
];

describe('check vectors, through both crypto providers', () => {
	it.each(CRYPTOS)('SHA-256 of "abc" is the FIPS 180-4 example digest (%s)', async (_, c) => {
		// FIPS 180-4 (NIST Secure Hash Standard) example "abc", one-block message; typed in from memory
		const [d] = await c.sha256([enc.encode('abc')]);
		expect(bytesToHex(d)).toBe('ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad');
		// and the two-block example "abcdbcdecdefdefgefghfghighijhijkijkljklmklmnlmnomnopnopq", typed in from memory
		const [d2] = await c.sha256([enc.encode('abcdbcdecdefdefgefghfghighijhijkijkljklmklmnlmnomnopnopq')]);
		expect(bytesToHex(d2)).toBe('248d6a61d20638b8e5c026930c3e6039a33ce45964ff2167f6ecedd419db06c1');
	});

	// RFC 8032 §7.1, TEST 1 to TEST 3 (Ed25519): secret key, public key, message, signature.
	// Typed in from memory; the test derives each public key and signature from the secret key, so a
	// mistyped vector fails here.
	const RFC8032 = [
		{
			name: 'TEST 1',
			secret: '9d61b19deffd5a60ba844af492ec2cc44449c5697b326919703bac031cae7f60',
			public: 'd75a980182b10ab7d54bfed3c964073a0ee172f3daa62325af021a68f707511a',
			message: '',
			signature: 'e5564300c360ac729086e2cc806e828a84877f1eb8e5d974d873e065224901555fb8821590a33bacc61e39701cf9b46bd25bf5f0595bbe24655141438e7a100b'
		},
		{
			name: 'TEST 2',
			secret: '4ccd089b28ff96da9db6c346ec114e0f5b8a319f35aba624da8cf6ed4fb8a6fb',
			public: '3d4017c3e843895a92b70aa74d1b7ebc9c982ccf2ec4968cc0cd55f12af4660c',
			message: '72',
			signature: '92a009a9f0d4cab8720e820b5f642540a2b27b5416503f8fb3762223ebdb69da085ac1e43e15996e458f3613d0f11d8c387b2eaeb4302aeeb00d291612bb0c00'
		},
		{
			name: 'TEST 3',
			secret: 'c5aa8df43f9f837bedb7442f31dcb7b166d38535076f094b85ce3a2e0b4458f7',
			public: 'fc51cd8e6218a1a38da47ed00230f0580816ed13ba3303ac5deb911548908025',
			message: 'af82',
			signature: '6291d657deec24024827e69c3abe01a30ce548a284743a445e3680d7db5ac3ac18ff9b538d16f290ae67f760984dc6594a7c15e9716ed28dc027beceea1ec40a'
		}
	];
	// DER prefixes of an Ed25519 key (RFC 8410): PKCS #8 private key and SPKI public key
	const PKCS8 = '302e020100300506032b657004220420';
	const SPKI = '302a300506032b6570032100';

	it.each(RFC8032)('RFC 8032 §7.1 $name: node signs the vector’s signature, and both providers verify it', async (v) => {
		const priv = createPrivateKey({ key: Buffer.from(PKCS8 + v.secret, 'hex'), format: 'der', type: 'pkcs8' });
		const spki = createPublicKey(priv).export({ type: 'spki', format: 'der' }) as Buffer;
		expect(spki.toString('hex')).toBe(SPKI + v.public);
		expect(sign(null, Buffer.from(v.message, 'hex'), priv).toString('hex')).toBe(v.signature);
		for (const [, c] of CRYPTOS) {
			expect(await c.verifyEd25519(hex(SPKI + v.public), hex(v.signature), hex(v.message))).toBe(true);
			// one bit off in the message, or in the signature, and it no longer verifies
			const other = v.message ? hex(v.message).map((b, i) => (i === 0 ? b ^ 1 : b)) : hex('00');
			expect(await c.verifyEd25519(hex(SPKI + v.public), hex(v.signature), other)).toBe(false);
			const sig = hex(v.signature);
			sig[5] ^= 0x10;
			expect(await c.verifyEd25519(hex(SPKI + v.public), sig, hex(v.message))).toBe(false);
		}
	});

	// RFC 8785 (JSON Canonicalization Scheme), §3.2.2 and §3.2.3 examples, typed in from the RFC's text
	const CANONICAL: [string, (v: unknown) => string | undefined][] = [
		['canonicalParsed', canonicalParsed],
		['the canonicalize package', (v) => canonicalize(v)]
	];
	it.each(CANONICAL)('%s serialises the RFC 8785 §3.2.2 example as the RFC shows', (_, canonicalParsed) => {
		const input = String.raw`{
			"numbers": [333333333.33333329, 1E30, 4.50, 2e-3, 0.000000000000000000000000001],
			"string": "\u20ac$\u000F\u000aA'\u0042\u0022\u005c\\\"\/",
			"literals": [null, true, false]
		}`;
		expect(canonicalParsed(JSON.parse(input))).toBe(String.raw`{"literals":[null,true,false],"numbers":[333333333.3333333,1e+30,4.5,0.002,1e-27],"string":"€$\u000f\nA'B\"\\\\\"/"}`);
	});

	it.each(CANONICAL)('%s sorts member names as RFC 8785 §3.2.3 shows', (_, canonicalParsed) => {
		const input = '{"\\u20ac":"Euro Sign","\\r":"Carriage Return","\\ufb33":"Hebrew Letter Dalet With Dagesh","1":"One","\\ud83d\\ude00":"Emoji: Grinning Face","\\u0080":"Control","\\u00f6":"Latin Small Letter O With Diaeresis"}';
		// RFC 8785 §3.2.3: the names come out as "\r", "1", "\u0080", "\u00f6", "\u20ac", "\ud83d\ude00", "\ufb33"
		expect(canonicalParsed(JSON.parse(input))).toBe(
			'{"\\r":"Carriage Return","1":"One","\u0080":"Control","\u00f6":"Latin Small Letter O With Diaeresis",' +
				'"\u20ac":"Euro Sign","\ud83d\ude00":"Emoji: Grinning Face","\ufb33":"Hebrew Letter Dalet With Dagesh"}'
		);
	});

	it('canonicalParsed writes RFC 8785 Appendix B’s numbers', () => {
		// a few rows of RFC 8785 Appendix B: IEEE 754 bit pattern → canonical text
		for (const [bits, text] of [['0000000000000001', '5e-324'], ['44b52d02c7e14af6', '1e+23'], ['3eb0c6f7a0b5ed8d', '0.000001'], ['41b3de4355555553', '333333333.3333332'], ['8000000000000000', '0']]) {
			expect(canonicalParsed(Buffer.from(bits, 'hex').readDoubleBE(0))).toBe(text);
		}
	});

	it('canonicalParsed agrees with the canonicalize package on any JSON', () => {
		fc.assert(fc.property(fc.jsonValue(), (v) => canonicalParsed(JSON.parse(JSON.stringify(v))) === canonicalize(JSON.parse(JSON.stringify(v)))), { numRuns: 300 });
	});
});

// ── a small chain and bundle built here, signed with a key of this test ────────────────────────────

const { privateKey } = generateKeyPairSync('ed25519');
const pem = String(createPublicKey(privateKey).export({ type: 'spki', format: 'pem' }));
const KEY: PublicKeyEntry = { keyId: '0123456789abcdef', publicKey: pem, validFrom: '2031-01-01T00:00:00.000Z', validUntil: null };

function chain(n: number) {
	const out: { seq: number; prev: string; hash: string; body: string }[] = [];
	let prev = GENESIS_HASH;
	for (let seq = 1; seq <= n; seq++) {
		const body = canonicalParsed({ action: 'item.weighed', actor: { id: null, label: 'curator@brightwater.example' }, after: { massUg: 1000 + seq, note: 'Fach “3” – ü' }, at: '2031-02-01T10:00:00.000Z', before: null, seq, subject: { id: `TRN-${seq}`, type: 'item' } });
		const hash = bytesToHex((nodeTrailCrypto.sha256([enc.encode(prev + body)]) as Uint8Array[])[0]);
		out.push({ seq, prev, hash, body });
		prev = hash;
	}
	return out;
}

function checkpointAt(events: ReturnType<typeof chain>, seq: number, keyId = KEY.keyId, key = privateKey): SignedCheckpoint {
	const e = events[seq - 1];
	const signed = checkpointText({ seq, hash: e.hash, count: seq, time: '2031-02-01T10:05:00.000Z', keyId });
	return { seq, hash: e.hash, keyId, signed, signature: sign(null, Buffer.from(signed), key).toString('base64') };
}

function bundle(events: ReturnType<typeof chain>, cps: SignedCheckpoint[], keys = [KEY], from = 1, to = events.length) {
	const lines = [JSON.stringify({ type: 'bundle', format: BUNDLE_FORMAT, from, to, events: to - from + 1, exportedAt: '2031-02-01T11:00:00.000Z' })];
	for (const k of keys) lines.push(JSON.stringify({ type: 'key', ...k }));
	for (const c of cps) lines.push(JSON.stringify({ type: 'checkpoint', ...c }));
	for (const e of events.slice(from - 1, to)) lines.push(`{"seq":${e.seq},"prev":"${e.prev}","hash":"${e.hash}","event":${e.body}}`);
	lines.push(JSON.stringify({ type: 'end', events: to - from + 1 }));
	return lines;
}
const bytes = (lines: string[]) => enc.encode(lines.join('\n') + '\n');

describe('checkpoints', () => {
	const events = chain(5);
	it('accepts a checkpoint its key signed, with both providers', async () => {
		for (const [, c] of CRYPTOS) expect(await checkCheckpoint(checkpointAt(events, 3), keyMap([KEY]), c)).toMatchObject({ ok: true, fields: { seq: 3, count: 3 } });
	});
	it('refuses a forged, a re-pointed, an unknown-key and an out-of-validity checkpoint, saying why', async () => {
		const good = checkpointAt(events, 3);
		const m = keyMap([KEY]);
		const forged = { ...good, signed: good.signed.replace(good.hash, events[1].hash), hash: events[1].hash };
		expect(await checkCheckpoint(forged, m, nodeTrailCrypto)).toEqual({ ok: false, reason: 'checkpoint 3: the signature does not verify with key 0123456789abcdef' });
		expect(await checkCheckpoint({ ...good, hash: events[1].hash }, m, nodeTrailCrypto)).toMatchObject({ ok: false, reason: expect.stringMatching(/names another seq, hash or key/) });
		const other = generateKeyPairSync('ed25519').privateKey;
		expect(await checkCheckpoint(checkpointAt(events, 3, 'fedcba9876543210', other), m, nodeTrailCrypto)).toMatchObject({ ok: false, reason: expect.stringMatching(/unknown key "fedcba9876543210"/) });
		expect(await checkCheckpoint(good, keyMap([{ ...KEY, validUntil: '2031-02-01T10:00:00.000Z' }]), nodeTrailCrypto)).toMatchObject({ ok: false, reason: expect.stringMatching(/outside the validity/) });
		expect(await checkCheckpoint({ ...good, signed: good.signed.replace('{', '{ ') }, m, nodeTrailCrypto)).toMatchObject({ ok: false, reason: expect.stringMatching(/not a canonical checkpoint/) });
	});
});

describe('bundles', () => {
	const events = chain(40);
	const cps = [checkpointAt(events, 10), checkpointAt(events, 20), checkpointAt(events, 30)];
	const lines = bundle(events, cps);
	const firstEvent = lines.findIndex((l) => l.startsWith('{"seq":'));
	const lineOf = (seq: number) => firstEvent + seq - 1;

	it.each(CRYPTOS)('verifies an intact bundle, whatever the chunk boundaries (%s)', async (_, c) => {
		const all = bytes(lines);
		const whole = await verifyBundleBytes(all, c);
		expect(whole).toEqual({ ok: true, events: 40, firstBrokenAt: null, from: 1, to: 40, checkpoints: { valid: 3, total: 3, matched: 3 }, head: events[39].hash });
		for (const size of [1, 7, 64, 1000]) {
			const v = new BundleVerifier(c, { batch: 3 });
			for (let i = 0; i < all.length; i += size) await v.push(all.subarray(i, i + size));
			expect(await v.end()).toEqual(whole);
		}
	});

	it('verifies a bundle that starts after a checkpoint, anchored by it, and refuses one that is not anchored', async () => {
		expect(await verifyBundleBytes(bytes(bundle(events, cps, [KEY], 21)), nodeTrailCrypto)).toMatchObject({ ok: true, events: 20, from: 21, to: 40 });
		expect(await verifyBundleBytes(bytes(bundle(events, cps, [KEY], 22)), nodeTrailCrypto)).toMatchObject({ ok: false, firstBrokenAt: 22, reason: expect.stringMatching(/no valid signed checkpoint at event 21/) });
	});

	const cases: [string, (l: string[]) => string[], number, RegExp][] = [
		['an event changed', (l) => l.map((x, i) => (i === lineOf(14) ? x.replace('"massUg":1014', '"massUg":1') : x)), 14, /content does not match its hash/],
		['an event deleted', (l) => l.filter((_, i) => i !== lineOf(17)), 17, /event 17 is missing/],
		['two events swapped', (l) => l.map((x, i) => (i === lineOf(25) ? l[lineOf(26)] : i === lineOf(26) ? l[lineOf(25)] : x)), 25, /event 25 is missing/],
		['a forged checkpoint', (l) => l.map((x) => (x.includes('"seq":20,"signed"') || x.startsWith('{"type":"checkpoint","seq":20') ? x.replace(/"signature":"[^"]+"/, `"signature":"${Buffer.alloc(64, 7).toString('base64')}"`) : x)), 20, /signature does not verify/],
		['a checkpoint signed by an unknown key', (l) => l.map((x) => (x.startsWith('{"type":"checkpoint","seq":30') ? JSON.stringify({ type: 'checkpoint', ...checkpointAt(events, 30, 'aaaaaaaaaaaaaaaa', generateKeyPairSync('ed25519').privateKey) }) : x)), 30, /unknown key "aaaaaaaaaaaaaaaa"/],
		['the stored hash of a checkpointed event changed', (l) => l.map((x, i) => (i === lineOf(20) ? x.replace(/"hash":"(.)/, (_, c) => `"hash":"${c === '0' ? '1' : '0'}`) : x)), 20, /content does not match its hash/],
		['a bundle truncated mid-line', (l) => [...l.slice(0, lineOf(33)), l[lineOf(33)].slice(0, 90)], 33, /ends in the middle of event 33/],
		['a bundle cut at a line boundary', (l) => [...l.slice(0, lineOf(36)), ''], 36, /ends before its end line/]
	];
	it.each(cases)('finds %s and names the first broken event', async (_, change, at, reason) => {
		const changed = change(lines);
		// every line ends in a newline, but for a line cut in the middle
		const text = changed.join('\n') + (changed.at(-1)!.startsWith('{"type":"end"') ? '\n' : '');
		for (const [, c] of CRYPTOS) {
			const r = await verifyBundleBytes(enc.encode(text), c);
			expect(r).toMatchObject({ ok: false, firstBrokenAt: at, events: at - 1 });
			expect(r.reason).toMatch(reason);
		}
	});

	it('finds a chain rewritten from some event on with fresh hashes at the first checkpoint after it', async () => {
		// events 24… rewritten and re-hashed: the chain holds together by itself
		const rewritten = chain(40).map((e) => ({ ...e }));
		let prev = rewritten[22].hash;
		for (let s = 24; s <= 40; s++) {
			const e = rewritten[s - 1];
			e.body = e.body.replace(`"massUg":${1000 + s}`, `"massUg":${s}`);
			e.prev = prev;
			e.hash = bytesToHex((nodeTrailCrypto.sha256([enc.encode(prev + e.body)]) as Uint8Array[])[0]);
			prev = e.hash;
		}
		const r = await verifyBundleBytes(bytes(bundle(rewritten, cps)), nodeTrailCrypto);
		// checkpoint 30 no longer matches: nothing after checkpoint 20 is vouched for
		expect(r).toMatchObject({ ok: false, firstBrokenAt: 21, events: 20 });
		expect(r.reason).toMatch(/no longer leads to the head signed at checkpoint 30: rewritten after checkpoint 20/);
		// without the checkpoints the rewrite would not show
		expect(await verifyBundleBytes(bytes(bundle(rewritten, [])), nodeTrailCrypto)).toMatchObject({ ok: true });
	});

	/**
	 * The first broken event as a plain reading finds it, one line at a time with every check in its
	 * order (format, place, link, hash, own seq, checkpoint), for comparison with the verifier, which
	 * reads and hashes in two passes.
	 */
	function firstBrokenPlainly(text: Uint8Array, valid: Map<number, string>): number | null {
		const lines = Buffer.from(text).toString('latin1').split('\n');
		const eventLine = /^\{"seq":(\d+),"prev":"([\s\S]{64})","hash":"([\s\S]{64})","event":([\s\S]+)\}$/;
		let expect = 1;
		let prev = GENESIS_HASH;
		let lastGood = 0;
		for (const l of lines) {
			if (!l.startsWith('{"seq":')) continue;
			const m = eventLine.exec(l);
			if (!m || Number(m[1]) !== expect || m[2] !== prev) return expect;
			if (createHash('sha256').update(Buffer.from(m[2] + m[4], 'latin1')).digest('hex') !== m[3]) return expect;
			const own = m[4].lastIndexOf(',"seq":');
			if (own < 0 || !new RegExp(`^${expect},`).test(m[4].slice(own + 7))) return expect;
			const cp = valid.get(expect);
			if (cp !== undefined) {
				if (cp !== m[3]) return lastGood + 1;
				lastGood = expect;
			}
			prev = m[3];
			expect++;
		}
		return expect === 41 ? null : expect;
	}

	it('names the same first broken event as a plain reading, for any changed byte, chunk size and batch, with every provider', async () => {
		const intact = bytes(lines);
		const valid = new Map(cps.map((c) => [c.seq, c.hash]));
		const eventsFrom = Buffer.from(intact).indexOf('{"seq":1,');
		const eventsTo = Buffer.from(intact).indexOf('{"type":"end"');
		let broken = 0;
		await fc.assert(
			fc.asyncProperty(fc.integer({ min: eventsFrom, max: eventsTo - 1 }), fc.integer({ min: 0, max: 255 }), fc.integer({ min: 1, max: 3000 }), fc.integer({ min: 1, max: 50 }), async (at, byte, size, batch) => {
				const changed = intact.slice();
				if (changed[at] === 10 || byte === 10 || byte === changed[at]) return;
				changed[at] = byte;
				const want = firstBrokenPlainly(changed, valid);
				if (want !== null) broken++;
				for (const [name, c] of CRYPTOS) {
					const v = new BundleVerifier(c, { batch });
					for (let i = 0; i < changed.length; i += size) await v.push(changed.subarray(i, i + size));
					const r = await v.end();
					expect(r.firstBrokenAt, `${name}: byte ${at} set to ${byte}, chunks of ${size}, batches of ${batch}: ${r.reason}`).toBe(want);
					expect(r.ok).toBe(want === null);
					if (want !== null) expect(r.events).toBe(want - 1);
				}
			}),
			{ numRuns: 300 }
		);
		// every changed byte breaks the chain; the count shows the cases were not skipped
		expect(broken).toBeGreaterThan(100);
	});
});
