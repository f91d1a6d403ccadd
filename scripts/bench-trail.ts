// `npm run bench:trail`: builds a trail of 1,000,000 events in a database of its own (each with its
// stored canonical body, as trail_append writes it) with a signed checkpoint every 1,000 events, and
// measures, side by side in one run:
//   1. the full verification (verifyTrail: every link and hash, and every checkpoint) against its
//      floor, PostgreSQL's own time to produce the same columns (the verification's COPY, written
//      by the server to /dev/null) — target ≥ 0.8 × the floor's throughput;
//   2. the incremental verification of the last 10,000 events (from the checkpoint there): p50/p95
//      over repeated runs — target p95 < 150 ms;
//   3. the offline verifier (regolog-verify's code) over an exported bundle of the whole chain against
//      node's SHA-256 over the same bytes it hashes — target ≥ 0.6;
//   4. appends through trail_append() (the app's only way in) against the statement the app sent
//      before (the same INSERT, sent directly by the owner role), with 4 writers each.
//
// Self-contained: it starts a PostgreSQL cluster of its own under .regolog/bench (port: the test
// profile's port base + 7, or REGOLOG_BENCH_DB_PORT), creates the database regolog_bench afresh,
// and drops it and stops the cluster at the end (a cluster that was already running is left so).
// REGOLOG_BENCH_EVENTS sets another chain length; REGOLOG_BENCH_KEEP=1 keeps the database, the
// bundle and the cluster afterwards, and a later run with REGOLOG_BENCH_REUSE=1 uses the kept chain
// instead of building it again (building a million events is most of the run on two cores).
import { spawnSync } from 'node:child_process';
import { createHash, hash as oneShotHash, generateKeyPairSync, sign } from 'node:crypto';
import { createReadStream, createWriteStream, existsSync, mkdirSync, statSync } from 'node:fs';
import { once } from 'node:events';
import { resolve } from 'node:path';
import pg from 'pg';
import { QueryTypes, Sequelize } from 'sequelize';
import { profile } from './lib/profile.mjs';
import { startCluster, stopCluster, ensureDatabase, DEFAULT_OWNER, DEFAULT_OWNER_PASSWORD } from './lib/pg.mjs';
import { migrateUp } from '../src/lib/server/migrator';
import {
	appendTrail, bundleLines, bundleRange, canonicalEvent, chainHash, keyIdOf, trailRowOf, trailStatement, verificationCopyToNull,
	verifyBundleFile, verifyFromCheckpoint, verifyTrail, GENESIS_HASH, SYSTEM_ACTOR, type TrailInput, type TrailRow
} from '../src/lib/server/trail';
import { checkpointText } from '../src/lib/domain/trail-verify';

const N = Number(process.env.REGOLOG_BENCH_EVENTS ?? 1_000_000);
const BATCH = 50_000;
const T0 = Date.UTC(2031, 0, 6, 8, 0, 0);
const ACTIONS = ['item.weighed', 'item.split', 'transfer.dispatched', 'handling.recorded'];
const log = (s: string) => console.log(`[bench:trail] ${s}`);
const secs = (ms: number) => `${(ms / 1000).toFixed(2)} s`;

/** Event seq exactly as the INSERT … SELECT below builds it in SQL. */
function eventAt(g: number): Omit<TrailRow, 'prev_hash' | 'hash'> {
	return {
		seq: g,
		at: new Date(T0 + g),
		actor_id: null,
		actor_label: 'curator@brightwater.example',
		action: ACTIONS[g % 4],
		subject_type: 'item',
		subject_id: `TRN-${String(g).padStart(7, '0')}`,
		before: g % 4 === 0 ? null : { massUg: 2_184_000 - (g % 1000), state: 'stored', holder: 'Brightwater Curation Facility' },
		after: {
			massUg: 2_184_000 - (g % 1000) - 7,
			uncertaintyUg: 1.633,
			state: g % 2 === 0 ? 'stored' : 'earmarked',
			container: `vial ${g % 97}`,
			place: 'Nitrogen cabinet N2-3, shelf 4',
			reason: 'Aliquot for Fennick Organics Lab – chiral GC',
			children: [`TRN-${String(g + 1).padStart(7, '0')}`, `TRN-${String(g + 2).padStart(7, '0')}`]
		}
	};
}

const INSERT = `
	INSERT INTO trail_events (seq, at, actor_id, actor_label, action, subject_type, subject_id, before, after, prev_hash, hash, body)
	SELECT g,
	       timestamptz '2031-01-06 08:00:00+00' + g * interval '1 millisecond',
	       NULL,
	       'curator@brightwater.example',
	       (ARRAY['item.weighed', 'item.split', 'transfer.dispatched', 'handling.recorded'])[1 + g % 4],
	       'item',
	       'TRN-' || lpad(g::text, 7, '0'),
	       CASE WHEN g % 4 = 0 THEN 'null'::jsonb
	            ELSE jsonb_build_object('massUg', 2184000 - g % 1000, 'state', 'stored', 'holder', 'Brightwater Curation Facility') END,
	       jsonb_build_object(
	           'massUg', 2184000 - g % 1000 - 7,
	           'uncertaintyUg', 1.633,
	           'state', CASE WHEN g % 2 = 0 THEN 'stored' ELSE 'earmarked' END,
	           'container', 'vial ' || (g % 97),
	           'place', 'Nitrogen cabinet N2-3, shelf 4',
	           'reason', 'Aliquot for Fennick Organics Lab – chiral GC',
	           'children', jsonb_build_array('TRN-' || lpad((g + 1)::text, 7, '0'), 'TRN-' || lpad((g + 2)::text, 7, '0'))),
	       h.prev, h.hash, h.body
	FROM unnest($1::bigint[], $2::text[], $3::text[], $4::text[]) AS h(g, prev, hash, body)`;

const CHECKPOINT_EVERY = 1000;
const benchKey = generateKeyPairSync('ed25519');
const benchKeyId = keyIdOf(benchKey.publicKey).keyId;

/** The signed checkpoints of the chain, one every 1,000 events, as the server signs them. */
async function insertCheckpoints(client: pg.Client, hashes: Map<number, string>): Promise<void> {
	const seqs: number[] = [];
	const hs: string[] = [];
	const signed: string[] = [];
	const sigs: string[] = [];
	const ats: string[] = [];
	for (const [seq, hash] of hashes) {
		const time = new Date(T0 + seq).toISOString();
		const text = checkpointText({ seq, hash, count: seq, time, keyId: benchKeyId });
		seqs.push(seq);
		hs.push(hash);
		signed.push(text);
		sigs.push(sign(null, Buffer.from(text), benchKey.privateKey).toString('base64'));
		ats.push(time);
	}
	await client.query(
		`INSERT INTO trail_checkpoints (seq, hash, count, at, key_id, signed, signature)
		 SELECT s, h, s, a::timestamptz, $6, t, g FROM unnest($1::bigint[], $2::text[], $3::text[], $4::text[], $5::text[]) AS x(s, h, t, g, a)`,
		[seqs, hs, signed, sigs, ats, benchKeyId]
	);
}

async function buildChain(client: pg.Client): Promise<void> {
	await client.query(`INSERT INTO trail_keys (key_id, public_key, valid_from) VALUES ($1, $2, $3)`, [
		benchKeyId, String(benchKey.publicKey.export({ type: 'spki', format: 'pem' })), new Date(T0 - 86_400_000)
	]);
	let prev = GENESIS_HASH;
	for (let lo = 1; lo <= N; lo += BATCH) {
		const hi = Math.min(N, lo + BATCH - 1);
		const seqs: number[] = [];
		const prevs: string[] = [];
		const hashes: string[] = [];
		const bodies: string[] = [];
		const marks = new Map<number, string>();
		for (let g = lo; g <= hi; g++) {
			const body = canonicalEvent(eventAt(g));
			const h = chainHash(prev, body);
			seqs.push(g);
			prevs.push(prev);
			hashes.push(h);
			bodies.push(body);
			prev = h;
			if (g % CHECKPOINT_EVERY === 0) marks.set(g, h);
		}
		await client.query(INSERT, [seqs, prevs, hashes, bodies]);
		await insertCheckpoints(client, marks);
		marks.clear();
		if (hi % 200_000 === 0 || hi === N) log(`  ${hi.toLocaleString('en')} events written`);
	}
}

/**
 * node's own SHA-256 over exactly the bytes the offline verifier hashes: each event's prev hash and
 * its text, taken out of the bundle's event lines (untimed, a slice at a time); only hashing is timed.
 */
async function bundleSha256(file: string): Promise<{ ms: number; bytes: number; events: number; fileMs: number; fileBytes: number }> {
	let ms = 0;
	let bytes = 0;
	let events = 0;
	let sink = 0;
	let rest = '';
	const prefix = /^\{"seq":\d+,"prev":"([0-9a-f]{64})","hash":"[0-9a-f]{64}","event":/;
	for await (const chunk of createReadStream(file, { highWaterMark: 8 << 20, encoding: 'utf8' })) {
		const lines = (rest + chunk).split('\n');
		rest = lines.pop()!;
		const messages: Buffer[] = [];
		for (const l of lines) {
			const m = prefix.exec(l);
			if (m) messages.push(Buffer.from(m[1] + l.slice(m[0].length, -1), 'utf8'));
		}
		const t = performance.now();
		for (const b of messages) sink ^= oneShotHash('sha256', b, 'buffer' as 'hex').length;
		ms += performance.now() - t;
		for (const b of messages) bytes += b.length;
		events += messages.length;
	}
	// and the whole file through one streamed SHA-256, for comparison
	const h = createHash('sha256');
	let fileMs = 0;
	let fileBytes = 0;
	for await (const chunk of createReadStream(file, { highWaterMark: 8 << 20 })) {
		const t = performance.now();
		h.update(chunk as Buffer);
		fileMs += performance.now() - t;
		fileBytes += (chunk as Buffer).length;
	}
	h.digest();
	if (sink === -1) log('');
	return { ms, bytes, events, fileMs, fileBytes };
}

const connectAs = (port: number, user: string, password: string, database = 'regolog_bench') =>
	new Sequelize(database, user, password, { host: '127.0.0.1', port, dialect: 'postgres', dialectModule: pg, logging: false, pool: { max: 8 } });
const APP = { user: process.env.REGOLOG_DB_USER ?? 'regolog', password: process.env.REGOLOG_DB_PASSWORD ?? 'regolog-local' };
const OWNER = { user: process.env.REGOLOG_DB_OWNER ?? DEFAULT_OWNER, password: process.env.REGOLOG_DB_OWNER_PASSWORD ?? DEFAULT_OWNER_PASSWORD };
/** Each throughput is the best of this many runs, its reference's too: the machine is shared, and the best run is the least disturbed. */
const RUNS = Number(process.env.BENCH_RUNS ?? 3);
const pct = (xs: number[], p: number) => [...xs].sort((a, b) => a - b)[Math.min(xs.length - 1, Math.ceil((p / 100) * xs.length) - 1)];

// Child modes: each measurement runs in a node process of its own, as the app's server or the
// command would: the process that built the chain holds a heap grown by a million events' worth of
// strings, whose collection would be timed with the verification.
if (process.argv[2] === '--verify' || process.argv[2] === '--incremental') {
	const sq = connectAs(Number(process.argv[3]), APP.user, APP.password);
	let out: unknown;
	if (process.argv[2] === '--verify') {
		const runs: number[] = [];
		let result: unknown = null;
		for (let i = 0; i < RUNS; i++) {
			const t = performance.now();
			result = await verifyTrail(sq);
			runs.push(performance.now() - t);
		}
		out = { ms: Math.min(...runs), runs, result };
	} else {
		const from = Number(process.argv[4]);
		const runs = Number(process.argv[5]);
		const ms: number[] = [];
		let result: unknown = null;
		for (let i = 0; i < runs + 3; i++) {
			const t = performance.now();
			result = await verifyFromCheckpoint(sq, from);
			if (i >= 3) ms.push(performance.now() - t); // the first three warm the connection's caches and the JIT
		}
		out = { ms, result };
	}
	await sq.close();
	console.log(JSON.stringify(out));
	process.exit(0);
}
if (process.argv[2] === '--offline') {
	const runs: number[] = [];
	let result: unknown = null;
	for (let i = 0; i < RUNS; i++) {
		const t = performance.now();
		result = await verifyBundleFile(process.argv[3]);
		runs.push(performance.now() - t);
	}
	console.log(JSON.stringify({ ms: Math.min(...runs), runs, result }));
	process.exit(0);
}

function child(args: string[]) {
	const r = spawnSync(process.execPath, ['--import', 'tsx', 'scripts/bench-trail.ts', ...args], { encoding: 'utf8', env: process.env, maxBuffer: 64 << 20 });
	if (r.status !== 0) throw new Error(`the measuring process (${args[0]}) failed: ${r.stderr}`);
	return JSON.parse(r.stdout.trim().split('\n').pop()!);
}

/** Appends through trail_append (as the app) or through the statement sent before it (an INSERT, as the owner). */
async function appendRate(sq: Sequelize, via: 'function' | 'direct', n: number, writers = 4): Promise<number> {
	const input = (i: number): TrailInput => ({ actor: SYSTEM_ACTOR, action: 'item.weighed', subjectType: 'item', subjectId: `TRN-${i}`, before: { massUg: 1000 + i }, after: { massUg: 999 + i, reason: 'Re-weighed after the glovebox transfer' } });
	const direct = (i: number) => {
		const { replacements } = trailStatement(input(i));
		return sq.transaction(async (t) =>
			trailRowOf(await sq.query<Record<string, unknown>>(
				`WITH h AS (SELECT seq, prev FROM trail_head_locked(NULL)),
				      b AS (SELECT :trail_head || h.seq::text || :trail_tail AS body FROM h),
				      i AS (INSERT INTO trail_events (seq, at, actor_id, actor_label, action, subject_type, subject_id, before, after, prev_hash, hash, body)
				            SELECT h.seq, CAST(:trail_at AS timestamptz), CAST(:trail_actor_id AS uuid), :trail_actor_label, :trail_action, :trail_subject_type, :trail_subject_id,
				                   CAST(:trail_before AS jsonb), CAST(:trail_after AS jsonb), h.prev, encode(sha256(convert_to(h.prev || b.body, 'UTF8')), 'hex'), b.body
				            FROM h, b RETURNING seq, prev_hash, hash)
				 SELECT seq AS trail_seq, prev_hash AS trail_prev_hash, hash AS trail_hash FROM i`,
				{ type: QueryTypes.SELECT, transaction: t, replacements }
			))
		);
	};
	let next = 0;
	const t = performance.now();
	await Promise.all(
		Array.from({ length: writers }, async () => {
			while (next < n) {
				const i = next++;
				if (via === 'function') await sq.transaction((tx) => appendTrail(sq, tx, input(i)));
				else await direct(i);
			}
		})
	);
	return n / ((performance.now() - t) / 1000);
}

const started = performance.now();
const pr = profile('test');
const root = resolve('.regolog/bench');
mkdirSync(root, { recursive: true });
const port = Number(process.env.REGOLOG_BENCH_DB_PORT ?? pr.portBase + 7);
const cluster = await startCluster({ root, port, log });
log(`PostgreSQL ${cluster.reused ? 'already running' : 'started'} on 127.0.0.1:${port}`);
const dbName = 'regolog_bench';
const reuse = process.env.REGOLOG_BENCH_REUSE === '1';
const admin = new pg.Client({ host: '127.0.0.1', port, user: 'postgres', password: cluster.password, database: 'postgres' });
await admin.connect();
const kept = reuse && (await admin.query('SELECT 1 FROM pg_database WHERE datname = $1', [dbName])).rowCount === 1;
await ensureDatabase({ port, password: cluster.password, dbName, user: APP.user, userPassword: APP.password, owner: OWNER.user, ownerPassword: OWNER.password, fresh: !kept });
await ensureDatabase({ port, password: cluster.password, dbName: 'regolog_bench_append', user: APP.user, userPassword: APP.password, owner: OWNER.user, ownerPassword: OWNER.password, fresh: true });
const sequelize = connectAs(port, APP.user, APP.password);
const raw = new pg.Client({ host: '127.0.0.1', port, user: OWNER.user, password: OWNER.password, database: dbName });
const bundleFile = resolve(root, 'bundle.ndjson');
let exitCode = 0;
try {
	await migrateUp(sequelize);
	await raw.connect();
	const have = Number((await raw.query('SELECT count(*)::int AS n FROM trail_events')).rows[0].n);
	if (kept && have === N) {
		log(`reusing the kept chain of ${N.toLocaleString('en')} events`);
	} else {
		if (have) throw new Error(`the kept database holds ${have} events, not ${N}: run without REGOLOG_BENCH_REUSE`);
		log(`building a chain of ${N.toLocaleString('en')} events with a signed checkpoint every ${CHECKPOINT_EVERY.toLocaleString('en')} (hashes and signatures computed in node, rows generated in SQL)…`);
		const t = performance.now();
		await buildChain(raw);
		await raw.query('VACUUM ANALYZE trail_events');
		log(`chain built in ${secs(performance.now() - t)}`);
	}

	// 1. full verification against PostgreSQL's own COPY of the same columns (server-side, to /dev/null)
	log('floor: the verification’s COPY of the same columns, written by the server to /dev/null…');
	const floorRuns: number[] = [];
	const su = new pg.Client({ host: '127.0.0.1', port, user: 'postgres', password: cluster.password, database: dbName });
	await su.connect();
	await su.query('SET jit = off');
	for (let i = 0; i < RUNS; i++) {
		const t = performance.now();
		await su.query(verificationCopyToNull(N));
		floorRuns.push(performance.now() - t);
	}
	await su.end();
	const floorMs = Math.min(...floorRuns);
	log('full verification (verifyTrail: every link and hash, every checkpoint), in a node process of its own…');
	const full = child(['--verify', String(port)]);
	log(`  verifyTrail: ${JSON.stringify(full.result)}`);
	const fullOk = full.result.ok && full.result.events === N;
	const floorRuns2 = await (async () => {
		const c = new pg.Client({ host: '127.0.0.1', port, user: 'postgres', password: cluster.password, database: dbName });
		await c.connect();
		await c.query('SET jit = off');
		const t = performance.now();
		await c.query(verificationCopyToNull(N));
		const ms = performance.now() - t;
		await c.end();
		return ms;
	})();
	const floor = Math.min(floorMs, floorRuns2);

	// 2. incremental verification of the last 10,000 events
	const from = N - 10_000;
	log(`incremental verification from the checkpoint at ${from.toLocaleString('en')} (the last 10,000 events), 40 runs…`);
	const inc = child(['--incremental', String(port), String(from), '40']);
	const incOk = inc.result.ok && inc.result.after === 10_000;

	// 3. the offline verifier over an exported bundle of the whole chain
	if (!(reuse && existsSync(bundleFile) && statSync(bundleFile).size > 0)) {
		log('exporting the bundle (GET /api/trail/export’s code) to .regolog/bench/bundle.ndjson…');
		const t = performance.now();
		const out = createWriteStream(bundleFile);
		for await (const chunk of bundleLines(sequelize, await bundleRange(sequelize, {}))) if (!out.write(chunk)) await once(out, 'drain');
		out.end();
		await once(out, 'finish');
		log(`  exported ${(statSync(bundleFile).size / 1e6).toFixed(0)} MB in ${secs(performance.now() - t)}`);
	}
	log('offline verification (regolog-verify’s code), in a node process of its own…');
	const off = child(['--offline', bundleFile]);
	const offOk = off.result.ok && off.result.events === N;
	log('node’s SHA-256 over the same bytes…');
	const shaRuns: Awaited<ReturnType<typeof bundleSha256>>[] = [];
	for (let i = 0; i < RUNS; i++) shaRuns.push(await bundleSha256(bundleFile));
	const sha = { ...shaRuns[0], ms: Math.min(...shaRuns.map((r) => r.ms)), fileMs: Math.min(...shaRuns.map((r) => r.fileMs)) };

	// 4. appends: through trail_append as the app, and the former direct INSERT as the owner
	log('appends: trail_append() as the app against the former direct INSERT as the owner, 4 writers, 2 × 2,000 each…');
	const appApp = connectAs(port, APP.user, APP.password, 'regolog_bench_append');
	const appOwner = connectAs(port, OWNER.user, OWNER.password, 'regolog_bench_append');
	await migrateUp(appApp);
	const rates = { function: [] as number[], direct: [] as number[] };
	for (let i = 0; i < 2; i++) {
		rates.direct.push(await appendRate(appOwner, 'direct', 2000));
		rates.function.push(await appendRate(appApp, 'function', 2000));
	}
	const appendCheck = await verifyTrail(appApp);
	await appApp.close();
	await appOwner.close();

	const mb = (b: number, ms: number) => `${(b / 1e6 / (ms / 1000)).toFixed(1)} MB/s`;
	const ratioFull = floor / full.ms;
	const p95 = pct(inc.ms, 95);
	const ratioOff = sha.ms / off.ms;
	const best = (xs: number[]) => Math.max(...xs);
	const ratioAppend = best(rates.function) / best(rates.direct);
	log('');
	log(`── results (${N.toLocaleString('en')} events, one run, side by side; throughputs are the best of ${RUNS} runs each)`);
	const all = (xs: number[]) => xs.map((x) => (x / 1000).toFixed(2)).join(', ');
	log(`   runs (s): full verification ${all(full.runs)}; floor ${all([...floorRuns, floorRuns2])}; offline verifier ${all(off.runs)}; SHA-256 ${all(shaRuns.map((r) => r.ms))}`);
	log(`1. full verification:     ${secs(full.ms)}  ${Math.round(N / (full.ms / 1000)).toLocaleString('en')} events/s`);
	log(`   floor (PostgreSQL COPY of the same columns to /dev/null): ${secs(floor)}  ${Math.round(N / (floor / 1000)).toLocaleString('en')} events/s`);
	log(`   ratio verification / floor: ${ratioFull.toFixed(3)}  (target ≥ 0.8: ${ratioFull >= 0.8 ? 'met' : 'NOT met'})`);
	log(`2. incremental, last 10,000 events: p50 ${pct(inc.ms, 50).toFixed(1)} ms, p95 ${p95.toFixed(1)} ms, max ${Math.max(...inc.ms).toFixed(1)} ms  (target p95 < 150 ms: ${p95 < 150 ? 'met' : 'NOT met'})`);
	log(`3. offline verifier:      ${secs(off.ms)}  ${mb(sha.bytes, off.ms)} of hashed bytes  (${(sha.fileBytes / 1e6).toFixed(0)} MB bundle read, ${mb(sha.fileBytes, off.ms)})`);
	log(`   node SHA-256 over the same ${(sha.bytes / 1e6).toFixed(0)} MB (${sha.events.toLocaleString('en')} messages, crypto.hash each): ${secs(sha.ms)}  ${mb(sha.bytes, sha.ms)}`);
	log(`   (for comparison: one SHA-256 streamed over the whole ${(sha.fileBytes / 1e6).toFixed(0)} MB file: ${secs(sha.fileMs)}  ${mb(sha.fileBytes, sha.fileMs)})`);
	log(`   ratio offline verifier / SHA-256 over the same bytes: ${ratioOff.toFixed(3)}  (target ≥ 0.6: ${ratioOff >= 0.6 ? 'met' : 'NOT met'})`);
	log(`4. appends, 4 writers: trail_append() ${rates.function.map((r) => r.toFixed(0)).join(', ')} /s; former direct INSERT ${rates.direct.map((r) => r.toFixed(0)).join(', ')} /s; ratio of the best ${ratioAppend.toFixed(3)}  (chain of ${appendCheck.events} appends ${appendCheck.ok ? 'verifies' : 'DOES NOT verify'})`);
	log(`whole benchmark: ${secs(performance.now() - started)}`);
	if (!fullOk || !incOk || !offOk || !appendCheck.ok) {
		exitCode = 1;
		log('a verification did not come out intact: the figures above are not meaningful');
	}
} finally {
	await raw.end().catch(() => {});
	await sequelize.close();
}
if (process.env.REGOLOG_BENCH_KEEP === '1') {
	log(`kept database ${dbName} and ${bundleFile} on 127.0.0.1:${port}`);
	await admin.end();
} else {
	for (const d of [dbName, 'regolog_bench_append']) await admin.query(`DROP DATABASE IF EXISTS ${d} WITH (FORCE)`);
	await admin.end();
	if (!cluster.reused) stopCluster({ root, log });
}
process.exit(exitCode);
