import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { createHash } from 'node:crypto';
import canonicalize from 'canonicalize';
import pg from 'pg';
import { QueryTypes, Sequelize } from 'sequelize';
import { migrateUp } from '../../src/lib/server/migrator';
import fc from 'fast-check';
import {
	appendTrail,
	canonicalEvent,
	canonicalParsed,
	canonicalRawRow,
	chainHash,
	verifyTrail,
	trailRowOf,
	trailStatement,
	GENESIS_HASH,
	SYSTEM_ACTOR,
	type TrailInput
} from '../../src/lib/server/trail';
import { CopyOutParser, CopyOutQuery, submitCopyOut } from '../../src/lib/server/copy-out';
import { asOwner, scratchDatabase, tamperTrail } from '../helpers/scratch-db';

/** Runs SQL (with parameters) as the trail's owner in `database`, with the trail's triggers off for that transaction only. */
const tamperIn = tamperTrail;

/** A test of its own on an empty, migrated database, dropped afterwards. */
async function withTrailDb(tag: string, test: (s: Awaited<ReturnType<typeof scratchDatabase>>) => Promise<void>): Promise<void> {
	const s = await scratchDatabase(tag);
	try {
		await migrateUp(s.sequelize);
		await test(s);
	} finally {
		await s.drop();
	}
}

/** JSON that jsonb can store: no NUL, no lone surrogate. */
const storable = (v: unknown) => !/\\u0000|\\ud[89a-f]/i.test(JSON.stringify(v));

describe('SHA-256 and canonical JSON check vectors', () => {
	it('SHA-256 of "abc" is the FIPS 180-4 example digest', () => {
		// FIPS 180-4 example "abc" (NIST, Secure Hash Standard; one-block message), typed in from memory
		const abc = 'ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad';
		expect(createHash('sha256').update('abc').digest('hex')).toBe(abc);
		// chainHash is SHA-256 over the previous hash followed by the canonical JSON
		expect(chainHash('', 'abc')).toBe(abc);
		expect(chainHash('ab', 'c')).toBe(abc);
	});

	it('SHA-256 of the two-block FIPS 180-4 example', () => {
		// FIPS 180-4 example "abcdbcdecdefdefgefghfghighijhijkijkljklmklmnlmnomnopnopq", typed in from memory
		expect(createHash('sha256').update('abcdbcdecdefdefgefghfghighijhijkijkljklmklmnlmnomnopnopq').digest('hex')).toBe(
			'248d6a61d20638b8e5c026930c3e6039a33ce45964ff2167f6ecedd419db06c1'
		);
	});

	// RFC 8785 §3.2.2 and §3.2.3 are checked for both canonicalize and canonicalParsed in tests/unit/trail-verify.test.ts
	it('serialises numbers as RFC 8785 Appendix B lists them', () => {
		// RFC 8785 Appendix B: IEEE 754 bit pattern → canonical text
		const samples: [string, string][] = [
			['0000000000000000', '0'],
			['8000000000000000', '0'],
			['0000000000000001', '5e-324'],
			['8000000000000001', '-5e-324'],
			['7fefffffffffffff', '1.7976931348623157e+308'],
			['ffefffffffffffff', '-1.7976931348623157e+308'],
			['4340000000000000', '9007199254740992'],
			['c340000000000000', '-9007199254740992'],
			['4430000000000000', '295147905179352830000'],
			['44b52d02c7e14af5', '9.999999999999997e+22'],
			['44b52d02c7e14af6', '1e+23'],
			['44b52d02c7e14af7', '1.0000000000000001e+23'],
			['444b1ae4d6e2ef4e', '999999999999999700000'],
			['444b1ae4d6e2ef4f', '999999999999999900000'],
			['444b1ae4d6e2ef50', '1e+21'],
			['3eb0c6f7a0b5ed8c', '9.999999999999997e-7'],
			['3eb0c6f7a0b5ed8d', '0.000001'],
			['41b3de4355555553', '333333333.3333332'],
			['41b3de4355555554', '333333333.33333325'],
			['41b3de4355555555', '333333333.3333333'],
			['41b3de4355555556', '333333333.3333334'],
			['41b3de4355555557', '333333333.33333343'],
			['becbf647612f3696', '-0.0000033333333333333333'],
			['43143ff3c1cb0959', '1424953923781206.2']
		];
		for (const [bits, text] of samples) {
			const n = Buffer.from(bits, 'hex').readDoubleBE(0);
			expect(canonicalize(n), bits).toBe(text);
		}
		// Appendix B: NaN and Infinity have no JSON form and are refused
		expect(() => canonicalize(Buffer.from('7fffffffffffffff', 'hex').readDoubleBE(0))).toThrow();
		expect(() => canonicalize(Buffer.from('7ff0000000000000', 'hex').readDoubleBE(0))).toThrow();
	});

	it('canonicalEvent is canonical JSON of the whole event, with the hashes left out', () => {
		const e = {
			seq: 7,
			at: new Date('2031-03-10T10:30:00.123Z'),
			actor_id: null,
			actor_label: 'curator@brightwater.example',
			action: 'item.split',
			subject_type: 'item',
			subject_id: 'HLF-0001',
			before: { massUg: 212_400_000, note: 'Ölfleck €' },
			after: { massUg: 212_399_210, children: ['HLF-0002', 'HLF-0003'] }
		};
		expect(canonicalEvent(e)).toBe(
			canonicalize({
				seq: 7,
				at: '2031-03-10T10:30:00.123Z',
				actor: { id: null, label: 'curator@brightwater.example' },
				action: 'item.split',
				subject: { type: 'item', id: 'HLF-0001' },
				before: e.before,
				after: e.after
			})
		);
	});
});

describe('the verification path builds the same canonical JSON', () => {
	// strings as PostgreSQL can hold them: whole Unicode characters, so no lone surrogates
	const json = fc.jsonValue({ stringUnit: 'grapheme' });
	const text = fc.string({ unit: 'grapheme', maxLength: 40 });

	it('canonicalParsed gives the canonicalize package’s text for any parsed JSON', () => {
		fc.assert(fc.property(json, (v) => canonicalParsed(JSON.parse(JSON.stringify(v))) === canonicalize(JSON.parse(JSON.stringify(v)))), { numRuns: 500 });
	});

	it('canonicalRawRow gives canonicalEvent’s text for a row read as text', () => {
		const row = fc.record({
			seq: fc.integer({ min: 1, max: Number.MAX_SAFE_INTEGER }),
			at: fc.date({ min: new Date('1970-01-01T00:00:00Z'), max: new Date('9999-12-31T23:59:59.999Z'), noInvalidDate: true }),
			actor_id: fc.option(fc.uuid(), { nil: null }),
			actor_label: text,
			action: text,
			subject_type: text,
			subject_id: text,
			before: fc.option(json, { nil: null }),
			after: fc.option(json, { nil: null })
		});
		fc.assert(
			fc.property(row, (e) => {
				const stored = { ...e, before: JSON.parse(JSON.stringify(e.before)), after: JSON.parse(JSON.stringify(e.after)) };
				const raw = [
					String(e.seq), e.at.toISOString(), e.actor_id, e.actor_label, e.action, e.subject_type, e.subject_id,
					e.before === null ? null : JSON.stringify(e.before), e.after === null ? null : JSON.stringify(e.after), 'p', 'h'
				] as Parameters<typeof canonicalRawRow>[0];
				expect(canonicalRawRow(raw)).toBe(canonicalEvent(stored));
			}),
			{ numRuns: 300 }
		);
	});
});

const events = (n: number, tag = 'seed'): TrailInput[] =>
	Array.from({ length: n }, (_, i) => ({
		actor: SYSTEM_ACTOR,
		action: 'item.weighed',
		subjectType: 'item',
		subjectId: `TRN-${String(i + 1).padStart(4, '0')}`,
		before: i % 3 === 0 ? undefined : { massUg: 1000 + i, where: 'Schrank “B” – Fach 3' },
		after: { massUg: 1000 + i - 1, tag, nested: { z: [1, 2.5, -0.125, 1e21], a: null, ü: true } }
	}));

describe('the trail in the database', () => {
	let scratch: Awaited<ReturnType<typeof scratchDatabase>>;

	async function append(list: TrailInput[], sequelize: Sequelize = scratch.sequelize) {
		for (const e of list) await sequelize.transaction((t) => appendTrail(sequelize, t, e));
	}
	const tamper = (sql: string) => tamperIn(scratch.name, sql);

	beforeAll(async () => {
		scratch = await scratchDatabase('trail');
		await migrateUp(scratch.sequelize);
	});
	afterAll(() => scratch.drop());

	it('appends a chain that verifies, linked from the genesis hash', async () => {
		await append(events(25));
		const r = await verifyTrail(scratch.sequelize);
		expect(r).toEqual({ ok: true, events: 25, firstBrokenAt: null });
		const [first] = (await scratch.sequelize.query('SELECT prev_hash FROM trail_events WHERE seq = 1'))[0] as { prev_hash: string }[];
		expect(first.prev_hash).toBe(GENESIS_HASH);
	});

	it('stores as body and hash exactly what node computes: canonicalEvent and SHA-256 over prev + body', async () => {
		await withTrailDb('trail_sqlhash', async (s8) => {
			const value = fc.jsonValue({ maxDepth: 3 }).filter(storable);
			const text = fc.string({ unit: 'binary', maxLength: 30 }).filter(storable);
			let n = 0;
			await fc.assert(
				fc.asyncProperty(text, text, fc.option(value, { nil: undefined }), value, async (subjectId, label, before, after) => {
					const input: TrailInput = { actor: { id: null, label }, action: 'item.weighed', subjectType: 'item', subjectId, before, after };
					const got = await s8.sequelize.transaction((t) => appendTrail(s8.sequelize, t, input));
					n++;
					const [[row]] = (await s8.sequelize.query('SELECT * FROM trail_events WHERE seq = :seq', { replacements: { seq: got.seq } })) as [any[], unknown];
					expect(row.body).toBe(canonicalEvent(row));
					expect(row.hash).toBe(chainHash(row.prev_hash, row.body));
					expect(row.body_matches).toBe(true);
					expect(got).toEqual({ seq: n, prevHash: row.prev_hash, hash: row.hash });
				}),
				{ numRuns: 60 }
			);
			expect(await verifyTrail(s8.sequelize)).toEqual({ ok: true, events: n, firstBrokenAt: null });
		});
	});

	it('fills in values the database gives where their marks stand, in the body, the hash and the columns', async () => {
		await withTrailDb('trail_fill', async (s9) => {
			const text = fc.string({ unit: 'binary', maxLength: 30 }).filter(storable);
			const codes = fc.array(fc.stringMatching(/^[A-Z]{2,5}-[0-9]{5,9}-[0-9A-Z]$/), { minLength: 1, maxLength: 6 });
			let n = 0;
			await fc.assert(
				fc.asyncProperty(text, codes, fc.boolean(), async (reason, values, reversed) => {
					const mark = (i: number) => `@mark-${n}-${i}@`;
					const marks = values.map((_, i) => mark(i));
					// the marks need not stand in their own order in the text
					const shown = reversed ? [...marks].reverse() : marks;
					const input: TrailInput = { actor: SYSTEM_ACTOR, action: 'item.split', subjectType: 'item', subjectId: 'x', before: { reason }, after: { children: shown.map((code) => ({ code })), reason } };
					const sqlArray = `ARRAY[${values.map((v) => `'${v}'`).join(', ')}]`;
					const st = trailStatement(input, 'trail', { marks, values: sqlArray });
					const got = await s9.sequelize.transaction(async (t) => trailRowOf(await s9.sequelize.query<Record<string, unknown>>(st.sql, { type: QueryTypes.SELECT, transaction: t, replacements: st.replacements })));
					n++;
					const [[row]] = (await s9.sequelize.query('SELECT * FROM trail_events WHERE seq = :seq', { replacements: { seq: got.seq } })) as [any[], unknown];
					const filled = shown.map((m) => values[marks.indexOf(m)]);
					expect(row.after).toEqual({ children: filled.map((code) => ({ code })), reason });
					expect(row.before).toEqual({ reason });
					expect(row.body).toBe(canonicalEvent(row));
					expect(row.body).not.toContain('@mark-');
					expect(row.hash).toBe(chainHash(row.prev_hash, row.body));
					expect(row.body_matches).toBe(true);
				}),
				{ numRuns: 40 }
			);
			expect(await verifyTrail(s9.sequelize)).toEqual({ ok: true, events: n, firstBrokenAt: null });
			// a mark that is not in the event, or is there twice, is refused before anything is sent
			const input: TrailInput = { actor: SYSTEM_ACTOR, action: 'item.split', subjectType: 'item', subjectId: 'x', after: { a: '@m@', b: '@m@', c: '@k@' } };
			expect(() => trailStatement(input, 'trail', { marks: ['@m@'], values: "ARRAY['A']" })).toThrow(/exactly once/);
			expect(() => trailStatement(input, 'trail', { marks: ['@z@'], values: "ARRAY['A']" })).toThrow(/exactly once/);
			expect(() => trailStatement(input, 'trail', { marks: ['@k@'], values: "ARRAY['A']" })).not.toThrow();
		});
	});

	it('verifies the same however many ranges are read at once', async () => {
		for (const ranges of [1, 2, 3, 7, 24, 25, 26, 10_000]) {
			expect(await verifyTrail(scratch.sequelize, { ranges })).toEqual({ ok: true, events: 25, firstBrokenAt: null });
		}
	});

	it('reads COPY tuples off the socket the same whatever the chunk boundaries, and hands the rest to the driver', async () => {
		const client = new pg.Client({
			host: process.env.REGOLOG_DB_HOST ?? '127.0.0.1', port: Number(process.env.REGOLOG_DB_PORT ?? 24320),
			user: process.env.REGOLOG_DB_USER ?? 'regolog', password: process.env.REGOLOG_DB_PASSWORD ?? 'regolog-local', database: scratch.name
		});
		await client.connect();
		// the bytes exactly as they came off the socket: CopyOutResponse, CopyData…, CopyDone, CommandComplete, ReadyForQuery
		const chunks: Buffer[] = [];
		const fields = (buf: Buffer, p: CopyOutParser) => {
			const f = (i: number) => (p.start[i] < 0 ? null : buf.toString('utf8', p.start[i], p.end[i]));
			return [Number(buf.readBigInt64BE(p.start[0])), f(1), f(2), f(3)];
		};
		try {
			const live: unknown[][] = [];
			const q = new CopyOutQuery(`COPY (SELECT seq, hash, NULL::text, body FROM trail_events ORDER BY seq) TO STDOUT (FORMAT binary)`, 4, (buf, p) => (live.push(fields(buf, p)), true), (c) => chunks.push(Buffer.from(c)));
			submitCopyOut(client, q);
			await q.done;
			expect(q.parser).toMatchObject({ ended: true, copyDone: true, finished: true, stopped: false });
			// the driver read the end of the copy and is ready for the next query
			expect((await client.query('SELECT 41 + 1 AS n')).rows).toEqual([{ n: 42 }]);
			const expected = ((await scratch.sequelize.query('SELECT seq::text AS seq, hash, body FROM trail_events ORDER BY trail_events.seq'))[0] as { seq: string; hash: string; body: string }[]).map(
				(r) => [Number(r.seq), r.hash, null, r.body]
			);
			expect(live).toEqual(expected);

			const whole = Buffer.concat(chunks);
			const read = (pieces: Buffer[]) => {
				const got: unknown[][] = [];
				let rest: Buffer | null = null;
				const p = new CopyOutParser(4, (buf, r) => (got.push(fields(buf, r)), true), (b) => (rest = Buffer.from(b)));
				// once the copy is over, the driver reads the chunks that follow (as CopyOutQuery arranges)
				for (const piece of pieces) {
					if (p.finished) rest = Buffer.concat([rest!, piece]);
					else p.push(piece);
				}
				return { got, ended: p.ended, rest: rest === null ? null : (rest as Buffer).toString('latin1') };
			};
			const first = read([whole]);
			expect(first.got).toEqual(expected);
			expect(first.ended).toBe(true);
			// what is left for the driver starts with CommandComplete ('C') "COPY n" and ends with ReadyForQuery ('Z')
			expect(first.rest).toMatch(new RegExp(`^C\\0\\0\\0.COPY ${expected.length}\\0Z`, 's'));
			for (const size of [1, 2, 3, 5, 19, 64, 333, 4096]) {
				const pieces = [];
				for (let i = 0; i < whole.length; i += size) pieces.push(whole.subarray(i, i + size));
				expect(read(pieces)).toEqual(first);
			}
			fc.assert(
				fc.property(fc.uniqueArray(fc.integer({ min: 1, max: whole.length - 1 }), { maxLength: 40 }), (cuts) => {
					const at = [0, ...cuts.sort((a, b) => a - b), whole.length];
					const pieces = at.slice(1).map((end, i) => whole.subarray(at[i], end));
					expect(read(pieces)).toEqual(first);
				}),
				{ numRuns: 60 }
			);
			// a stream cut short has not ended; bytes that are not COPY data are refused
			expect(read([whole.subarray(0, whole.length - 40)]).ended).toBe(false);
			const notCopy = Buffer.concat([Buffer.from([0x64, 0, 0, 0, 28]), Buffer.from('not a copy stream at all')]);
			expect(() => read([notCopy])).toThrow(/not PostgreSQL binary COPY data/);

			// an error part-way through the copy reaches the caller, and the connection stays usable
			const failing = new CopyOutQuery(`COPY (SELECT seq, hash, NULL::text, (1 / (seq - 3))::text FROM trail_events ORDER BY seq) TO STDOUT (FORMAT binary)`, 4, () => true);
			submitCopyOut(client, failing);
			await expect(failing.done).rejects.toThrow(/division by zero/);
			expect((await client.query('SELECT 1 AS n')).rows).toEqual([{ n: 1 }]);
		} finally {
			await client.end();
		}
	});

	it('refuses the app’s own role every change to the trail, and every change to its triggers and functions', async () => {
		const q = scratch.sequelize;
		const [[who]] = (await q.query('SELECT current_user AS u')) as [{ u: string }[], unknown];
		expect(who.u).toBe(process.env.REGOLOG_DB_USER ?? 'regolog');
		await expect(q.query(`UPDATE trail_events SET actor_label = 'someone else' WHERE seq = 3`)).rejects.toThrow(/permission denied for table trail_events/);
		await expect(q.query('DELETE FROM trail_events WHERE seq = 3')).rejects.toThrow(/permission denied for table trail_events/);
		await expect(q.query('TRUNCATE trail_events')).rejects.toThrow(/permission denied for table trail_events/);
		// an event can only come through trail_append(), which links and hashes it itself
		await expect(q.query(`INSERT INTO trail_events (seq, at, actor_label, action, subject_type, subject_id, prev_hash, hash) VALUES (999, now(), 'x', 'item.weighed', 'item', 'x', repeat('0', 64), repeat('1', 64))`)).rejects.toThrow(/permission denied for table trail_events/);
		// the triggers and functions belong to the owner role alone
		await expect(q.query('ALTER TABLE trail_events DISABLE TRIGGER trail_no_update')).rejects.toThrow(/must be owner of table trail_events/);
		await expect(q.query('ALTER TABLE trail_events DISABLE TRIGGER ALL')).rejects.toThrow(/must be owner of table trail_events/);
		await expect(q.query('DROP TRIGGER trail_no_update ON trail_events')).rejects.toThrow(/must be owner of (table|relation) trail_events/);
		await expect(q.query('ALTER FUNCTION trail_append(bigint, text, text, timestamptz, uuid, text, text, text, text, jsonb, jsonb, boolean) SECURITY INVOKER')).rejects.toThrow(/must be owner of function trail_append/);
		await expect(q.query('ALTER FUNCTION refuse_trail_change() RENAME TO harmless')).rejects.toThrow(/must be owner of function refuse_trail_change/);
		await expect(q.query(`CREATE OR REPLACE FUNCTION refuse_trail_change() RETURNS trigger LANGUAGE plpgsql AS $$ BEGIN RETURN NEW; END $$`)).rejects.toThrow(/must be owner of function refuse_trail_change|permission denied for schema public/);
		await expect(q.query('ALTER TABLE trail_events ALTER COLUMN body_matches DROP EXPRESSION')).rejects.toThrow(/must be owner of table trail_events/);
		await expect(q.query('CREATE TABLE a_table_of_its_own (x int)')).rejects.toThrow(/permission denied for schema public/);
		// the checkpoints and keys: read and append, nothing else
		await expect(q.query(`UPDATE trail_checkpoints SET signature = 'x'`)).rejects.toThrow(/permission denied for table trail_checkpoints/);
		await expect(q.query('DELETE FROM trail_keys')).rejects.toThrow(/permission denied for table trail_keys/);
		await expect(q.query('ALTER TABLE trail_checkpoints DISABLE TRIGGER USER')).rejects.toThrow(/must be owner of table trail_checkpoints/);
		// and the app's role cannot switch triggers off for its session
		await expect(q.query('SET session_replication_role = replica')).rejects.toThrow(/permission denied/);
		// the owner itself still meets the triggers: the trail is append-only for everybody
		await expect(asOwner(scratch.name, (c) => c.query(`UPDATE trail_events SET actor_label = 'someone else' WHERE seq = 3`))).rejects.toThrow(/append-only: UPDATE refused/);
		await expect(asOwner(scratch.name, (c) => c.query('DELETE FROM trail_events WHERE seq = 3'))).rejects.toThrow(/append-only: DELETE refused/);
		await expect(asOwner(scratch.name, (c) => c.query('TRUNCATE trail_events'))).rejects.toThrow(/append-only: TRUNCATE refused/);
		expect(await verifyTrail(q)).toMatchObject({ ok: true, events: 25 });
	});

	it('refuses an appended event whose body does not say what its columns say', async () => {
		const st = trailStatement({ actor: SYSTEM_ACTOR, action: 'item.weighed', subjectType: 'item', subjectId: 'TRN-0001', after: { massUg: 5 } });
		// the same statement with another subject in the columns than in the body
		const replacements = { ...st.replacements, trail_subject_id: 'TRN-0002' };
		await expect(scratch.sequelize.transaction((t) => scratch.sequelize.query(st.sql, { transaction: t, replacements }))).rejects.toThrow(/does not say what its columns say/);
		expect(await verifyTrail(scratch.sequelize)).toMatchObject({ ok: true, events: 25 });
	});

	it('finds a row changed directly in the database and names the first broken event', async () => {
		await tamper(`UPDATE trail_events SET after = jsonb_set(after, '{massUg}', '1') WHERE seq = 9`);
		const r = await verifyTrail(scratch.sequelize);
		expect(r).toMatchObject({ ok: false, events: 8, firstBrokenAt: 9, reason: 'content does not match its hash' });
		// later changes do not hide the first one
		await tamper(`UPDATE trail_events SET actor_label = 'intruder' WHERE seq = 17`);
		expect(await verifyTrail(scratch.sequelize, { ranges: 4 })).toMatchObject({ ok: false, firstBrokenAt: 9 });
		// a break in the second of three ranges is still the first one found
		expect(await verifyTrail(scratch.sequelize, { ranges: 3 })).toMatchObject({ ok: false, events: 8, firstBrokenAt: 9 });
	});

	it('finds a rewritten event whose own hash was recomputed, at the next link', async () => {
		await withTrailDb('trail_rehash', async (s2) => {
			await append(events(6), s2.sequelize);
			const [rows] = (await s2.sequelize.query('SELECT * FROM trail_events WHERE seq = 4')) as [any[], unknown];
			const row = { ...rows[0], after: { massUg: 1 } };
			const hash = chainHash(row.prev_hash, canonicalEvent(row));
			// a thorough rewrite: the stored body too, so that event 4 agrees with itself
			await tamperIn(s2.name, `UPDATE trail_events SET after = '{"massUg": 1}', body = $2, hash = $1 WHERE seq = 4`, [hash, canonicalEvent(row)]);
			// event 4 is consistent with itself; the chain breaks where event 5 still points to the old hash
			expect(await verifyTrail(s2.sequelize)).toMatchObject({ ok: false, events: 4, firstBrokenAt: 5, reason: 'link to the previous event does not match' });
			// the same where the break falls between two ranges read at once (1 | 2–3 | 4 | 5–6)
			for (const ranges of [2, 4, 6]) {
				expect(await verifyTrail(s2.sequelize, { ranges })).toMatchObject({ ok: false, events: 4, firstBrokenAt: 5, reason: 'link to the previous event does not match' });
			}
		});
	});

	it('finds a changed body, and a column changed without its body, at that event', async () => {
		await withTrailDb('trail_body', async (s5) => {
			await append(events(8), s5.sequelize);
			const [[r]] = (await s5.sequelize.query('SELECT body, body_matches FROM trail_events WHERE seq = 3')) as [any[], unknown];
			expect(r.body_matches).toBe(true);
			const edit = (sql: string) => tamperIn(s5.name, sql);
			await edit(`UPDATE trail_events SET subject_id = 'TRN-9999' WHERE seq = 6`);
			expect(await verifyTrail(s5.sequelize)).toMatchObject({ ok: false, events: 5, firstBrokenAt: 6, reason: 'content does not match its hash' });
			await edit(`UPDATE trail_events SET body = replace(body, '"massUg":1001', '"massUg":1') WHERE seq = 2`);
			expect(await verifyTrail(s5.sequelize, { ranges: 3 })).toMatchObject({ ok: false, events: 1, firstBrokenAt: 2 });
			// with the generated column's definition gone, the same comparison is made row by row
			await asOwner(s5.name, (c) => c.query('ALTER TABLE trail_events ALTER COLUMN body_matches DROP EXPRESSION'));
			expect(await verifyTrail(s5.sequelize)).toMatchObject({ ok: false, firstBrokenAt: 2 });
		});
	});

	it('verifies events written before bodies were stored from their columns', async () => {
		await withTrailDb('trail_old', async (s6) => {
			await append(events(3), s6.sequelize);
			// an event as it was written before migration 0031: no body
			const row = { seq: 4, at: new Date('2031-02-01T12:00:00.250Z'), actor_id: null, actor_label: 'system', action: 'item.weighed', subject_type: 'item', subject_id: 'TRN-0004', before: null, after: { massUg: 5 } };
			const [[head]] = (await s6.sequelize.query('SELECT hash FROM trail_events WHERE seq = 3')) as [any[], unknown];
			await asOwner(s6.name, (c) => c.query(
				`INSERT INTO trail_events (seq, at, actor_id, actor_label, action, subject_type, subject_id, before, after, prev_hash, hash)
				 VALUES (4, $1, NULL, 'system', 'item.weighed', 'item', 'TRN-0004', 'null', '{"massUg": 5}', $2, $3)`,
				[row.at, head.hash, chainHash(head.hash, canonicalEvent(row))]
			));
			await append(events(2, 'after'), s6.sequelize);
			expect(await verifyTrail(s6.sequelize)).toEqual({ ok: true, events: 6, firstBrokenAt: null });
			expect(await verifyTrail(s6.sequelize, { ranges: 3 })).toEqual({ ok: true, events: 6, firstBrokenAt: null });
			await tamperIn(s6.name, `UPDATE trail_events SET after = '{"massUg": 6}' WHERE seq = 4`);
			expect(await verifyTrail(s6.sequelize)).toMatchObject({ ok: false, events: 3, firstBrokenAt: 4, reason: 'content does not match its hash' });
		});
	});

	it('verifies a chain whose rows are not stored in seq order', async () => {
		await withTrailDb('trail_order', async (s7) => {
			await append(events(6), s7.sequelize);
			// an UPDATE that changes nothing still writes a new row version at the end of the table
			await tamperIn(s7.name, 'UPDATE trail_events SET seq = seq WHERE seq IN (2, 4)');
			const [physical] = (await s7.sequelize.query('SELECT seq::int AS seq FROM trail_events')) as [{ seq: number }[], unknown];
			expect(physical.map((r) => r.seq)).toEqual([1, 3, 5, 6, 2, 4]);
			expect(await verifyTrail(s7.sequelize)).toEqual({ ok: true, events: 6, firstBrokenAt: null });
			await tamperIn(s7.name, 'DELETE FROM trail_events WHERE seq = 5');
			expect(await verifyTrail(s7.sequelize)).toMatchObject({ ok: false, events: 4, firstBrokenAt: 5, reason: 'event 5 is missing' });
		});
	});

	it('finds a deleted event', async () => {
		await withTrailDb('trail_gap', async (s3) => {
			await append(events(5), s3.sequelize);
			await tamperIn(s3.name, 'DELETE FROM trail_events WHERE seq = 3');
			expect(await verifyTrail(s3.sequelize)).toMatchObject({ ok: false, events: 2, firstBrokenAt: 3, reason: 'event 3 is missing' });
			for (const ranges of [2, 3, 5]) {
				expect(await verifyTrail(s3.sequelize, { ranges })).toMatchObject({ ok: false, events: 2, firstBrokenAt: 3, reason: 'event 3 is missing' });
			}
		});
	});

	it('keeps one chain under 200 concurrent writers', async () => {
		const s4 = await scratchDatabase('trail_concurrent');
		const wide = new Sequelize(s4.name, process.env.REGOLOG_DB_USER ?? 'regolog', process.env.REGOLOG_DB_PASSWORD ?? 'regolog-local', {
			host: process.env.REGOLOG_DB_HOST ?? '127.0.0.1',
			port: Number(process.env.REGOLOG_DB_PORT ?? 24320),
			dialect: 'postgres',
			dialectModule: pg,
			logging: false,
			pool: { max: 50, min: 0, acquire: 60_000 }
		});
		try {
			await migrateUp(s4.sequelize);
			const N = 200;
			const list = events(N, 'concurrent');
			// every writer does some work of its own in its transaction before and after appending
			await Promise.all(
				list.map((e) =>
					wide.transaction(async (t) => {
						await wide.query('SELECT pg_sleep(random() * 0.01)', { transaction: t });
						await appendTrail(wide, t, e);
						await wide.query('SELECT pg_sleep(random() * 0.01)', { transaction: t });
					})
				)
			);
			expect(await verifyTrail(s4.sequelize)).toEqual({ ok: true, events: N, firstBrokenAt: null });
			const [[stats]] = (await s4.sequelize.query(
				`SELECT count(*)::int AS n, min(seq)::int AS lo, max(seq)::int AS hi,
				        count(DISTINCT prev_hash)::int AS prevs, count(DISTINCT subject_id)::int AS subjects
				 FROM trail_events`
			)) as [any[], unknown];
			// seqs 1..N without gaps, every writer's event present once, and no two events share a prev_hash
			expect(stats).toEqual({ n: N, lo: 1, hi: N, prevs: N, subjects: N });
		} finally {
			await wide.close();
			await s4.drop();
		}
	});
});
