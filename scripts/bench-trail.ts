// `npm run bench:trail`: builds a trail of 1,000,000 events in a database of its own (each with its
// stored canonical body, as appendTrail writes it), verifies it
// with verifyTrail, and compares verifyTrail's throughput with node's own SHA-256 over the same
// bytes (each event's previous hash followed by its canonical JSON), measured in the same run.
//
// Self-contained: it starts a PostgreSQL cluster of its own under .regolog/bench (port: the test
// profile's port base + 7, or REGOLOG_BENCH_DB_PORT), creates the database regolog_bench afresh,
// and drops it and stops the cluster at the end (a cluster that was already running is left so).
// REGOLOG_BENCH_EVENTS sets another chain length; REGOLOG_BENCH_KEEP=1 keeps the database and the
// cluster afterwards, for looking at the chain by hand.
import { spawnSync } from 'node:child_process';
import { createHash, hash as oneShotHash } from 'node:crypto';
import { resolve } from 'node:path';
import pg from 'pg';
import { Sequelize } from 'sequelize';
import { profile } from './lib/profile.mjs';
import { startCluster, stopCluster, ensureDatabase } from './lib/pg.mjs';
import { migrateUp } from '../src/lib/server/migrator';
import { canonicalEvent, chainHash, verifyTrail, GENESIS_HASH, type TrailRow } from '../src/lib/server/trail';

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

async function buildChain(client: pg.Client): Promise<void> {
	let prev = GENESIS_HASH;
	for (let lo = 1; lo <= N; lo += BATCH) {
		const hi = Math.min(N, lo + BATCH - 1);
		const seqs: number[] = [];
		const prevs: string[] = [];
		const hashes: string[] = [];
		const bodies: string[] = [];
		for (let g = lo; g <= hi; g++) {
			const body = canonicalEvent(eventAt(g));
			const h = chainHash(prev, body);
			seqs.push(g);
			prevs.push(prev);
			hashes.push(h);
			bodies.push(body);
			prev = h;
		}
		await client.query(INSERT, [seqs, prevs, hashes, bodies]);
		if (hi % 200_000 === 0 || hi === N) log(`  ${hi.toLocaleString('en')} events written`);
	}
}

/**
 * node's own SHA-256 over the same bytes verifyTrail hashes: for each event, the previous hash and
 * the canonical JSON. The inputs are prepared untimed, a chunk at a time; only hashing is timed.
 * Three ways of calling node:crypto are timed: createHash and the one-shot crypto.hash over each
 * event as a JS string (as appendTrail hashes), and crypto.hash over each event's bytes already
 * encoded as UTF-8 in a Buffer (as verifyTrail hashes them, straight from the stream: no encoding
 * step, so this is the fastest and the strictest reference).
 */
function sha256Baseline(): { bytes: number; string: { ms: number; way: string }; buffer: { ms: number; way: string } } {
	const CHUNK = 100_000;
	let prev = GENESIS_HASH;
	let bytes = 0;
	const time = { createHash: 0, hash: 0, buffer: 0 };
	let sink = 0;
	for (let lo = 1; lo <= N; lo += CHUNK) {
		const hi = Math.min(N, lo + CHUNK - 1);
		const inputs: string[] = [];
		for (let g = lo; g <= hi; g++) {
			const c = canonicalEvent(eventAt(g));
			const h = chainHash(prev, c);
			inputs.push(prev + c);
			bytes += Buffer.byteLength(prev) + Buffer.byteLength(c);
			prev = h;
		}
		const encoded = inputs.map((s) => Buffer.from(s, 'utf8'));
		let t = performance.now();
		for (const s of inputs) sink ^= createHash('sha256').update(s).digest('hex').charCodeAt(0);
		time.createHash += performance.now() - t;
		t = performance.now();
		for (const s of inputs) sink ^= oneShotHash('sha256', s, 'hex').charCodeAt(0);
		time.hash += performance.now() - t;
		t = performance.now();
		for (const b of encoded) sink ^= oneShotHash('sha256', b, 'hex').charCodeAt(0);
		time.buffer += performance.now() - t;
	}
	if (sink === -1) log('');
	return {
		bytes,
		string: time.hash < time.createHash ? { ms: time.hash, way: 'crypto.hash per event string' } : { ms: time.createHash, way: 'crypto.createHash per event string' },
		buffer: { ms: time.buffer, way: 'crypto.hash per event Buffer' }
	};
}

// `--verify <port>`: verify the benchmark's chain in this process and print the time as JSON. The
// benchmark runs its verification so, in a process of its own, as the app's server would: the
// process that built the chain holds a heap grown by a million events' worth of strings, whose
// collection would be timed with the verification.
if (process.argv[2] === '--verify') {
	const sq = new Sequelize('regolog_bench', process.env.REGOLOG_DB_USER ?? 'regolog', process.env.REGOLOG_DB_PASSWORD ?? 'regolog-local', {
		host: '127.0.0.1', port: Number(process.argv[3]), dialect: 'postgres', dialectModule: pg, logging: false
	});
	const t = performance.now();
	const result = await verifyTrail(sq);
	const ms = performance.now() - t;
	await sq.close();
	console.log(JSON.stringify({ ms, result }));
	process.exit(0);
}

const started = performance.now();
const pr = profile('test');
const root = resolve('.regolog/bench');
const port = Number(process.env.REGOLOG_BENCH_DB_PORT ?? pr.portBase + 7);
const cluster = await startCluster({ root, port, log });
log(`PostgreSQL ${cluster.reused ? 'already running' : 'started'} on 127.0.0.1:${port}`);
const user = process.env.REGOLOG_DB_USER ?? 'regolog';
const password = process.env.REGOLOG_DB_PASSWORD ?? 'regolog-local';
const dbName = 'regolog_bench';
await ensureDatabase({ port, password: cluster.password, dbName, user, userPassword: password, fresh: true });
const sequelize = new Sequelize(dbName, user, password, { host: '127.0.0.1', port, dialect: 'postgres', dialectModule: pg, logging: false });
const raw = new pg.Client({ host: '127.0.0.1', port, user, password, database: dbName });
let exitCode = 0;
try {
	await migrateUp(sequelize);
	await raw.connect();
	log(`building a chain of ${N.toLocaleString('en')} events (hashes computed in node, rows generated in SQL)…`);
	let t = performance.now();
	await buildChain(raw);
	await raw.query('VACUUM ANALYZE trail_events');
	log(`chain built in ${secs(performance.now() - t)}`);

	log('verifying with verifyTrail, in a node process of its own…');
	const child = spawnSync(process.execPath, ['--import', 'tsx', 'scripts/bench-trail.ts', '--verify', String(port)], { encoding: 'utf8', env: process.env });
	if (child.status !== 0) throw new Error(`the verifying process failed: ${child.stderr}`);
	const { ms: verifyMs, result } = JSON.parse(child.stdout.trim().split('\n').pop()!) as { ms: number; result: Awaited<ReturnType<typeof verifyTrail>> };
	log(`verifyTrail: ${JSON.stringify(result)}`);
	if (!result.ok || result.events !== N) {
		exitCode = 1;
		log('the benchmark chain did not verify: the figures below are not meaningful');
	}

	log('measuring node’s own SHA-256 over the same bytes…');
	const base = sha256Baseline();
	const mb = base.bytes / 1e6;
	const rate = (ms: number) => `${secs(ms)}  ${(mb / (ms / 1000)).toFixed(1)} MB/s`;
	const strict = base.buffer.ms / verifyMs;
	const asStrings = base.string.ms / verifyMs;
	log(`bytes hashed per pass: ${mb.toFixed(1)} MB (${(base.bytes / N).toFixed(0)} B per event)`);
	log(`verifyTrail:                    ${rate(verifyMs)}  ${Math.round(N / (verifyMs / 1000)).toLocaleString('en')} events/s`);
	log(`node SHA-256, UTF-8 bytes:      ${rate(base.buffer.ms)}  (${base.buffer.way})`);
	log(`node SHA-256, strings:          ${rate(base.string.ms)}  (${base.string.way}, encoding included)`);
	log(`throughput ratio verifyTrail / SHA-256 over the bytes:   ${strict.toFixed(3)} (target ≥ 0.5: ${strict >= 0.5 ? 'met' : 'NOT met'})`);
	log(`throughput ratio verifyTrail / SHA-256 over the strings: ${asStrings.toFixed(3)} (target ≥ 0.5: ${asStrings >= 0.5 ? 'met' : 'NOT met'})`);
	log(`wall time of verifyTrail: ${secs(verifyMs)}; whole benchmark: ${secs(performance.now() - started)}`);
} finally {
	await raw.end().catch(() => {});
	await sequelize.close();
}
if (process.env.REGOLOG_BENCH_KEEP === '1') {
	log(`kept database ${dbName} on 127.0.0.1:${port}`);
} else {
	const admin = new pg.Client({ host: '127.0.0.1', port, user: 'postgres', password: cluster.password, database: 'postgres' });
	await admin.connect();
	await admin.query(`DROP DATABASE IF EXISTS ${dbName} WITH (FORCE)`);
	await admin.end();
	if (!cluster.reused) stopCluster({ root, log });
}
process.exit(exitCode);
