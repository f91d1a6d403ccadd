import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { mkdtempSync, readFileSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { spawnSync } from 'node:child_process';
import { QueryTypes } from 'sequelize';
import { migrateUp } from '../../src/lib/server/migrator';
import {
	appendTrail,
	bundleLines,
	bundleRange,
	canonicalEvent,
	chainHash,
	checkpointNow,
	listCheckpoints,
	listKeys,
	rotateSigningKey,
	SYSTEM_ACTOR,
	verifyFromCheckpoint,
	verifyTrail,
	verifyBundleFile,
	type TrailInput
} from '../../src/lib/server/trail';
import { checkCheckpoint, checkpointText, keyMap } from '../../src/lib/domain/trail-verify';
import { nodeTrailCrypto } from '../../src/lib/server/trail/node-crypto';
import { asOwner, scratchDatabase, tamperTrail } from '../helpers/scratch-db';

const dir = mkdtempSync(join(tmpdir(), 'regolog-trail-keys-'));
process.env.REGOLOG_TRAIL_KEY_FILE = join(dir, 'trail-signing-key.pem');
process.env.REGOLOG_TRAIL_WITNESSES = 'witness-one@brightwater.example, witness-two@brightwater.example';

type Scratch = Awaited<ReturnType<typeof scratchDatabase>>;

const events = (n: number, tag: string): TrailInput[] =>
	Array.from({ length: n }, (_, i) => ({
		actor: SYSTEM_ACTOR,
		action: 'item.weighed',
		subjectType: 'item',
		subjectId: `HLF-${tag}-${i + 1}`,
		after: { massUg: 212_400_000 - i, note: 'Schale „A“' }
	}));

async function append(s: Scratch, list: TrailInput[]) {
	for (const e of list) await s.sequelize.transaction((t) => appendTrail(s.sequelize, t, e));
}

async function head(s: Scratch): Promise<number> {
	const [r] = await s.sequelize.query<{ n: number }>('SELECT max(seq)::int AS n FROM trail_events', { type: QueryTypes.SELECT });
	return r.n;
}

/** A trail of its own: 30 events, a checkpoint, 30 more, a checkpoint, 30 more, a checkpoint; then 10 unsigned. */
async function signedTrail(tag: string) {
	const s = await scratchDatabase(tag);
	await migrateUp(s.sequelize);
	const cps: number[] = [];
	for (let k = 0; k < 3; k++) {
		await append(s, events(30, `${k}`));
		cps.push((await checkpointNow(s.sequelize, 'on-demand'))!.seq);
	}
	await append(s, events(10, 'tail'));
	return { s, cps };
}

async function writeBundle(s: Scratch, want: { from?: number; to?: number } = {}): Promise<{ file: string; lines: string[] }> {
	const range = await bundleRange(s.sequelize, want);
	let text = '';
	for await (const chunk of bundleLines(s.sequelize, range)) text += chunk;
	const file = join(dir, `bundle-${Math.random().toString(36).slice(2)}.ndjson`);
	writeFileSync(file, text);
	return { file, lines: text.trimEnd().split('\n') };
}

function cli(file: string) {
	const r = spawnSync(process.execPath, ['bin/regolog-verify.mjs', file], { encoding: 'utf8' });
	return { status: r.status, out: r.stdout + r.stderr };
}

describe('signed checkpoints', () => {
	let s: Scratch;
	beforeAll(async () => {
		s = await scratchDatabase('trail_cp');
		await migrateUp(s.sequelize);
	});
	afterAll(() => s.drop());

	it('makes the key file with mode 0600 and registers the key as a trail event', async () => {
		await append(s, events(12, 'a'));
		const cp = await checkpointNow(s.sequelize, 'start-up');
		expect(statSync(process.env.REGOLOG_TRAIL_KEY_FILE!).mode & 0o777).toBe(0o600);
		// the private key is in the file, not in the database
		expect(readFileSync(process.env.REGOLOG_TRAIL_KEY_FILE!, 'utf8')).toMatch(/BEGIN PRIVATE KEY/);
		const keys = await listKeys(s.sequelize);
		expect(keys).toHaveLength(1);
		expect(keys[0]).toMatchObject({ keyId: cp!.keyId, validUntil: null, publicKey: expect.stringMatching(/^-----BEGIN PUBLIC KEY-----/) });
		const [reg] = await s.sequelize.query<{ seq: number; action: string; subject_id: string }>(`SELECT seq, action, subject_id FROM trail_events WHERE action LIKE 'trail.key%'`, { type: QueryTypes.SELECT });
		expect(reg).toMatchObject({ seq: 13, action: 'trail.key_registered', subject_id: cp!.keyId });
		// the checkpoint covers the registration too: seq, head hash, count and time, canonical and signed
		expect(cp!.seq).toBe(13);
		const fields = JSON.parse(cp!.signed);
		expect(fields).toEqual({ count: 13, hash: cp!.hash, keyId: cp!.keyId, seq: 13, time: expect.stringMatching(/^\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d\.\d{3}Z$/), type: 'regolog.trail.checkpoint' });
		expect(await checkCheckpoint(cp!, keyMap(keys), nodeTrailCrypto)).toMatchObject({ ok: true });
	});

	it('mails each checkpoint to the witnesses through the outbox', async () => {
		const mail = await s.sequelize.query<{ to_address: string; subject: string; body_text: string }>(`SELECT to_address, subject, body_text FROM mail_outbox WHERE kind = 'trail_checkpoint' ORDER BY to_address`, { type: QueryTypes.SELECT });
		expect(mail.map((m) => m.to_address)).toEqual(['witness-one@brightwater.example', 'witness-two@brightwater.example']);
		const [cp] = await listCheckpoints(s.sequelize, { last: 1 });
		expect(mail[0].subject).toBe(`Regolog trail checkpoint at event ${cp.seq}`);
		expect(mail[0].body_text).toContain(cp.signed);
		expect(mail[0].body_text).toContain(cp.signature);
	});

	it('signs only when its rule says so, and once however many instances ask at the same time', async () => {
		expect(await checkpointNow(s.sequelize, 'start-up')).toBeNull(); // the head has not moved
		await append(s, events(5, 'b'));
		expect(await checkpointNow(s.sequelize, 'milestone')).toBeNull(); // 5 < 1,000 events
		expect(await checkpointNow(s.sequelize, 'hourly')).toBeNull(); // the last is minutes old
		const made = await Promise.all(Array.from({ length: 6 }, () => checkpointNow(s.sequelize, 'start-up')));
		expect(made.filter(Boolean)).toHaveLength(1);
		const all = await listCheckpoints(s.sequelize);
		expect(all.map((c) => c.seq)).toEqual([13, 18]);
	});

	it('signs a milestone after 1,000 events, and an hourly one when the last is an hour old', async () => {
		process.env.REGOLOG_TRAIL_CHECKPOINT_EVERY = '4';
		try {
			await append(s, events(3, 'c'));
			expect(await checkpointNow(s.sequelize, 'milestone')).toBeNull();
			await append(s, events(1, 'd'));
			expect((await checkpointNow(s.sequelize, 'milestone'))?.seq).toBe(22);
		} finally {
			delete process.env.REGOLOG_TRAIL_CHECKPOINT_EVERY;
		}
		await append(s, events(1, 'e'));
		expect(await checkpointNow(s.sequelize, 'hourly')).toBeNull();
		// the last checkpoint made an hour ago (its time in the table only; the chain is untouched)
		await tamperTrail(s.name, `UPDATE trail_checkpoints SET at = at - interval '61 minutes' WHERE seq = 22`);
		expect((await checkpointNow(s.sequelize, 'hourly'))?.seq).toBe(23);
	});

	it('rotates the key: the rotation is a trail event, the old key stays valid for its own checkpoints', async () => {
		const before = (await listKeys(s.sequelize))[0];
		const r = await rotateSigningKey(s.sequelize, { id: null, label: 'admin@brightwater.example' });
		expect(r.keyId).not.toBe(before.keyId);
		const keys = await listKeys(s.sequelize);
		expect(keys.map((k) => k.keyId)).toEqual([before.keyId, r.keyId]);
		expect(keys[0].validUntil).toBe(keys[1].validFrom);
		const [ev] = await s.sequelize.query<{ action: string; before: unknown; after: { keyId: string } }>(`SELECT action, before, after FROM trail_events WHERE action = 'trail.key_rotated'`, { type: QueryTypes.SELECT });
		expect(ev).toMatchObject({ before: { keyId: before.keyId }, after: { keyId: r.keyId } });
		expect(r.checkpoint?.keyId).toBe(r.keyId);
		expect(await verifyTrail(s.sequelize)).toEqual({ ok: true, events: await head(s), firstBrokenAt: null, checkpoints: { valid: 5, total: 5, matched: 5 } });
	});
});

describe('verification from a checkpoint, in full and offline, against tampering', () => {
	it('verifies incrementally and in full, offline with the command, and agrees', async () => {
		const { s, cps } = await signedTrail('trail_inc');
		try {
			const h = await head(s);
			const inc = await verifyFromCheckpoint(s.sequelize, cps[1]);
			expect(inc).toMatchObject({ ok: true, events: h, firstBrokenAt: null, head: h, after: h - cps[1], checkpoint: { seq: cps[1], signature: 'valid' }, checkpoints: { valid: 2, total: 2, matched: 2 } });
			expect(await verifyFromCheckpoint(s.sequelize, cps[1] + 1)).toBeNull();
			expect(await verifyTrail(s.sequelize)).toMatchObject({ ok: true, events: h, checkpoints: { valid: 3, total: 3, matched: 3 } });
			const { file } = await writeBundle(s);
			expect(await verifyBundleFile(file)).toMatchObject({ ok: true, events: h, from: 1, to: h, checkpoints: { valid: 3, total: 3, matched: 3 } });
			const c = cli(file);
			expect(c.status).toBe(0);
			expect(c.out).toMatch(new RegExp(`^intact: events 1–${h} \\(${h}\\)`));
			// a bundle from the middle starts just after the checkpoint at or before it
			const part = await writeBundle(s, { from: cps[1] + 5, to: h - 2 });
			expect(JSON.parse(part.lines[0])).toMatchObject({ from: cps[1] + 1, to: h - 2 });
			expect(await verifyBundleFile(part.file)).toMatchObject({ ok: true, from: cps[1] + 1, to: h - 2 });
		} finally {
			await s.drop();
		}
	});

	/** Every tamper case: the database's verifiers and the bundle's both name the first broken event. */
	const cases: { name: string; tamper: (s: Scratch, cps: number[]) => Promise<number>; reason: RegExp; incrementalFrom?: (cps: number[]) => number }[] = [
		{
			name: 'an event changed',
			tamper: async (s, cps) => {
				await tamperTrail(s.name, `UPDATE trail_events SET after = jsonb_set(after, '{massUg}', '1'), body = replace(body, '"massUg":', '"massUg":1') WHERE seq = $1`, [cps[1] + 4]);
				return cps[1] + 4;
			},
			reason: /content does not match its hash/
		},
		{
			name: 'an event deleted',
			tamper: async (s, cps) => {
				await tamperTrail(s.name, `DELETE FROM trail_events WHERE seq = $1`, [cps[1] + 7]);
				return cps[1] + 7;
			},
			reason: /event \d+ is missing/
		},
		{
			name: 'two events swapped',
			tamper: async (s, cps) => {
				const a = cps[1] + 3;
				// the two events change places: a + 1's row at seq a, and a's at a + 1
				const cols = 'at, actor_id, actor_label, action, subject_type, subject_id, before, after, prev_hash, hash, body';
				await tamperTrail(
					s.name,
					`CREATE TEMP TABLE x AS SELECT seq, ${cols} FROM trail_events WHERE seq IN (${a}, ${a + 1});
					 DELETE FROM trail_events WHERE seq IN (${a}, ${a + 1});
					 INSERT INTO trail_events (seq, ${cols}) SELECT ${2 * a + 1} - seq, ${cols} FROM x;`
				);
				return a;
			},
			reason: /link to the previous event does not match|content does not match|does not say its own seq/
		},
		{
			name: 'a forged checkpoint',
			tamper: async (s, cps) => {
				// a checkpoint one event earlier, its text made as the server makes it, with the later one's signature
				const [e] = (await asOwner(s.name, (c) => c.query('SELECT hash FROM trail_events WHERE seq = $1', [cps[2] - 1]))).rows;
				const [real] = await listCheckpoints(s.sequelize, { seq: cps[2] });
				const f = JSON.parse(real.signed);
				const signed = checkpointText({ seq: cps[2] - 1, hash: e.hash, count: cps[2] - 1, time: f.time, keyId: f.keyId });
				await tamperTrail(s.name, `INSERT INTO trail_checkpoints (seq, hash, count, at, key_id, signed, signature) SELECT $1, $2, $1, at, key_id, $3, signature FROM trail_checkpoints WHERE seq = $4`, [cps[2] - 1, e.hash, signed, cps[2]]);
				return cps[2] - 1;
			},
			reason: /signature does not verify/,
			incrementalFrom: (cps) => cps[0]
		},
		{
			name: 'a checkpoint signed by an unknown key',
			tamper: async (s, cps) => {
				// a key nobody registered: its row removed together with its checkpoints' key
				await tamperTrail(s.name, `INSERT INTO trail_keys (key_id, public_key, valid_from) SELECT 'ffffffffffffffff', 'none', valid_from + interval '1 microsecond' FROM trail_keys LIMIT 1;
					UPDATE trail_checkpoints SET key_id = 'ffffffffffffffff', signed = replace(signed, key_id, 'ffffffffffffffff') WHERE seq = $1;
					ALTER TABLE trail_checkpoints DROP CONSTRAINT trail_checkpoints_key_id_fkey; DELETE FROM trail_keys WHERE key_id = 'ffffffffffffffff'`.replace(/\$1/g, String(cps[2])));
				return cps[2];
			},
			reason: /unknown key "ffffffffffffffff"/,
			incrementalFrom: (cps) => cps[0]
		},
		{
			name: 'a chain rewritten from some event on with fresh hashes',
			tamper: async (s, cps) => {
				// from cps[1] + 1 − 6 on (inside the second stretch), every event changed and re-hashed, in body and columns alike
				const from = cps[1] - 6;
				const rows = (await asOwner(s.name, (c) => c.query('SELECT * FROM trail_events WHERE seq >= $1 ORDER BY seq', [from]))).rows;
				let prev = rows[0].prev_hash;
				const updates: string[] = [];
				for (const r of rows) {
					const row = { ...r, after: { ...(r.after ?? {}), massUg: 1 } };
					const body = canonicalEvent(row);
					const hash = chainHash(prev, body);
					updates.push(`UPDATE trail_events SET after = '${JSON.stringify(row.after).replace(/'/g, "''")}', body = '${body.replace(/'/g, "''")}', prev_hash = '${prev}', hash = '${hash}' WHERE seq = ${r.seq};`);
					prev = hash;
				}
				await tamperTrail(s.name, updates.join('\n'));
				// the chain links up by itself now; checkpoint cps[1] no longer matches, cps[0] still does
				return cps[0] + 1;
			},
			reason: /no longer leads to the head signed at checkpoint \d+: rewritten after checkpoint \d+/,
			incrementalFrom: (cps) => cps[0]
		}
	];

	for (const c of cases) {
		it(`finds ${c.name}, and names the first broken event, in the database and in the bundle`, async () => {
			const { s, cps } = await signedTrail('trail_tamper');
			try {
				const at = await c.tamper(s, cps);
				const full = await verifyTrail(s.sequelize);
				expect(full).toMatchObject({ ok: false, firstBrokenAt: at, events: at - 1 });
				expect(full.reason).toMatch(c.reason);
				const from = c.incrementalFrom ? c.incrementalFrom(cps) : cps[1];
				const inc = await verifyFromCheckpoint(s.sequelize, from);
				expect(inc).toMatchObject({ ok: false, firstBrokenAt: at });
				const { file } = await writeBundle(s);
				const offline = await verifyBundleFile(file);
				expect(offline).toMatchObject({ ok: false, firstBrokenAt: at });
				const run = cli(file);
				expect(run.status).toBe(1);
				expect(run.out).toContain(`BROKEN at event ${at}:`);
			} finally {
				await s.drop();
			}
		});
	}

	it('finds a bundle truncated mid-line, with the command', async () => {
		const { s } = await signedTrail('trail_cut');
		try {
			const { file, lines } = await writeBundle(s);
			const k = lines.findIndex((l) => l.startsWith('{"seq":50,'));
			writeFileSync(file, lines.slice(0, k).join('\n') + '\n' + lines[k].slice(0, 120));
			const run = cli(file);
			expect(run.status).toBe(1);
			expect(run.out).toContain('BROKEN at event 50: the bundle ends in the middle of event 50');
		} finally {
			await s.drop();
		}
	});
});
