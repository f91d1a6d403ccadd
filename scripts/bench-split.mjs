// `npm run bench:split`: split throughput through the HTTP API (8 concurrent clients, each on its
// own parent) as a ratio to pgbench running the same database transaction on the same cluster in
// the same run, and lineage latency for a parent with 10,000 descendants twelve levels deep.
// A benchmark prints figures; it asserts nothing. Its stack lives in .regolog/bench (fresh each run).
import { spawn, spawnSync } from 'node:child_process';
import { writeFileSync, mkdtempSync, existsSync, readFileSync } from 'node:fs';
import { tmpdir, cpus } from 'node:os';
import { join } from 'node:path';
import http from 'node:http';
import pg from 'pg';

process.env.REGOLOG_DATA_DIR ??= '.regolog/bench';
process.env.REGOLOG_DB_NAME ??= 'regolog_bench';
const { startStack, run, buildIsStale, waitForPort, log } = await import('./lib/stack.mjs');
const { pgBinDir } = await import('./lib/pg.mjs');

const CLIENTS = Number(process.env.BENCH_CLIENTS ?? 8);
const SECONDS = Number(process.env.BENCH_SECONDS ?? 10);
const CHILD_UG = 1_000;
const PARENT_UG = 500_000_000;
/** Time every core of the machine has spent, and spent idle, so far (Linux /proc/stat). */
function machineCpu() {
	const v = readFileSync('/proc/stat', 'utf8').split('\n')[0].trim().split(/\s+/).slice(1, 9).map(Number);
	return { total: v.reduce((a, b) => a + b, 0), idle: v[3] + v[4] };
}
const busySince = (a) => {
	const b = machineCpu();
	return 100 * (1 - (b.idle - a.idle) / Math.max(1, b.total - a.total));
};
const LINEAGE_RUNS = Number(process.env.BENCH_LINEAGE_RUNS ?? 100);

const stack = await startStack('test', { fresh: true });
const env = { ...stack.env, NODE_ENV: 'production' };
let app = null;
const stop = () => {
	if (app && app.exitCode === null) app.kill('SIGTERM');
	stack.stop();
};
process.on('SIGINT', () => (stop(), process.exit(130)));

try {
	if (run(process.execPath, ['--import', 'tsx', 'scripts/setup-db.ts'], { ...env, NODE_ENV: 'development' }) !== 0) throw new Error('migration or seed failed');
	if (buildIsStale() && run('npx', ['vite', 'build', '--logLevel', 'warn'], env) !== 0) throw new Error('build failed');
	// REGOLOG_BENCH_PROFILE=<dir>: the app writes a CPU profile there when it stops
	const profileArgs = process.env.REGOLOG_BENCH_PROFILE ? ['--cpu-prof', `--cpu-prof-dir=${process.env.REGOLOG_BENCH_PROFILE}`] : [];
	app = spawn(process.execPath, [...profileArgs, 'build'], { stdio: ['ignore', 'ignore', 'inherit'], env: { ...process.env, ...env } });
	await waitForPort(Number(env.PORT), 'the app');
	const base = `http://127.0.0.1:${env.PORT}`;
	// the benchmark's own set-up (its tables, the parents) is the owner's; pgbench and the app run as the app's role
	const db = new pg.Client({ host: '127.0.0.1', port: Number(env.REGOLOG_DB_PORT), user: env.REGOLOG_DB_OWNER, password: env.REGOLOG_DB_OWNER_PASSWORD, database: env.REGOLOG_DB_NAME });
	// a failed run stops the cluster under this connection: that is reported below, not thrown again
	db.on('error', () => {});
	await db.connect();

	// ── a signed-in curator
	const signIn = await fetch(`${base}/api/auth/sign-in`, {
		method: 'POST', headers: { 'content-type': 'application/json', origin: base },
		body: JSON.stringify({ email: 'curator@brightwater.example', password: process.env.REGOLOG_DEMO_PASSWORD ?? 'brightwater-demo' })
	});
	if (signIn.status !== 200) throw new Error(`sign-in failed: ${signIn.status}`);
	const cookie = signIn.headers.get('set-cookie').split(';')[0];
	// every request goes through node:http with kept-alive connections, the lightest client node
	// has: the benchmark's own clients share the machine's cores with the app and PostgreSQL, as
	// pgbench's do, and fetch cost about three times more CPU per split on a 2-core machine
	// (4.3 ms against 1.2–1.4 ms; the line on the cores' use prints this client's share)
	const agent = new http.Agent({ keepAlive: true, maxSockets: CLIENTS });
	// `raw`: the answer's bytes, not parsed (a parse allocates, and its garbage would be collected
	// while the next answer is timed)
	const send = (method, path, text, raw = false) =>
		new Promise((resolve, reject) => {
			const headers = { cookie, origin: base, ...(text === undefined ? {} : { 'content-type': 'application/json', 'content-length': Buffer.byteLength(text) }) };
			const req = http.request(base + path, { method, agent, headers }, (res) => {
				const parts = [];
				res.on('data', (d) => parts.push(d));
				res.on('end', () => {
					const lastByte = performance.now();
					const bytes = Buffer.concat(parts);
					resolve({ status: res.statusCode, body: raw ? bytes : JSON.parse(bytes.toString('utf8')), lastByte });
				});
				res.on('error', reject);
			});
			req.on('error', reject);
			req.end(text);
		});
	const api = (method, path, body) => send(method, path, body === undefined ? undefined : JSON.stringify(body));
	await db.query(`INSERT INTO collections (prefix, name, kind, reserve_fraction, loss_tolerance_ug) VALUES ('BNH', 'Benchmark via HTTP', 'laboratory_analogue', 0.5, 1000), ('BNP', 'Benchmark via pgbench', 'laboratory_analogue', 0.5, 1000)`);
	const register = async (collection, n) => {
		const codes = [];
		for (let i = 0; i < n; i++) {
			const r = await api('POST', '/api/items', { collection, massUg: PARENT_UG, description: `benchmark parent ${i}` });
			if (r.status !== 201) throw new Error(`registering a parent failed: ${JSON.stringify(r.body)}`);
			codes.push(r.body.item.code);
		}
		return codes;
	};

	// ── split throughput through the HTTP API: two 1 mg children per split, no reweighing
	const httpParents = await register('BNH', CLIENTS);
	const splitBody = JSON.stringify({ children: [{ massUg: CHILD_UG }, { massUg: CHILD_UG }] });
	// a split counts only with both children in its answer
	const split = async (code) => {
		const r = await send('POST', `/api/items/${encodeURIComponent(code)}/splits`, splitBody);
		return { ...r, status: r.status === 201 && r.body.children?.length === 2 ? 201 : r.status };
	};
	for (const code of httpParents) await split(code); // warm-up
	let httpDone = 0;
	let httpFailed = 0;
	const cpu0 = machineCpu();
	const client0 = process.cpuUsage();
	const t0 = performance.now();
	const until = t0 + SECONDS * 1000;
	await Promise.all(
		httpParents.map(async (code) => {
			while (performance.now() < until) {
				const r = await split(code);
				if (r.status === 201) httpDone++;
				else httpFailed++;
			}
		})
	);
	const httpTps = httpDone / ((performance.now() - t0) / 1000);
	const httpBusy = busySince(cpu0);
	const clientUsage = process.cpuUsage(client0);
	const clientMsPerSplit = (clientUsage.user + clientUsage.system) / 1000 / Math.max(1, httpDone + httpFailed);

	// ── pgbench: the same transaction in SQL (lock the parent, split row, serials, two children,
	// four ledger rows, parent update, trail append through the same trail_head_locked())
	const pgParents = await register('BNP', CLIENTS);
	await db.query('CREATE TABLE bench_parents (n int PRIMARY KEY, id uuid NOT NULL)');
	for (const [n, code] of pgParents.entries()) await db.query('INSERT INTO bench_parents SELECT $1, id FROM items WHERE code = $2', [n, code]);
	const dir = mkdtempSync(join(tmpdir(), 'regolog-bench-'));
	const script = join(dir, 'split.sql');
	writeFileSync(
		script,
		`BEGIN;
SELECT i.id AS pid, i.mass_ug AS m, i.collection_id AS cid, i.depth AS d FROM items i JOIN bench_parents b ON b.id = i.id WHERE b.n = :client_id FOR UPDATE OF i \\gset
INSERT INTO splits (parent_id, parent_before_ug, parent_after_ug, children_total_ug, loss_ug, loss_u_ug, reweighed, verdict) VALUES (CAST(:pid AS uuid), CAST(:m AS bigint), CAST(:m AS bigint) - ${2 * CHILD_UG}, ${2 * CHILD_UG}, 0, 0, false, 'ok') RETURNING id AS sid \\gset
UPDATE collections SET next_serial = next_serial + 2 WHERE id = CAST(:cid AS uuid) RETURNING next_serial - 2 AS s \\gset
WITH c AS (INSERT INTO items (collection_id, serial, code, parent_id, depth, kind, description, initial_mass_ug, mass_ug, split_id)
  SELECT CAST(:cid AS uuid), x, 'BNP-' || x, CAST(:pid AS uuid), CAST(:d AS int) + 1, 'aliquot', 'Aliquot', ${CHILD_UG}, ${CHILD_UG}, CAST(:sid AS uuid)
  FROM generate_series(CAST(:s AS bigint), CAST(:s AS bigint) + 1) x RETURNING id) SELECT min(id::text) AS c1, max(id::text) AS c2 FROM c \\gset
SELECT coalesce(max(seq), 0) + 1 AS q FROM ledger_entries WHERE item_id = CAST(:pid AS uuid) \\gset
INSERT INTO ledger_entries (item_id, seq, kind, delta_ug, balance_after_ug, split_id, counterpart_id, note) VALUES
  (CAST(:pid AS uuid), CAST(:q AS int), 'split_out', -${CHILD_UG}, CAST(:m AS bigint) - ${CHILD_UG}, CAST(:sid AS uuid), CAST(:c1 AS uuid), ''),
  (CAST(:pid AS uuid), CAST(:q AS int) + 1, 'split_out', -${CHILD_UG}, CAST(:m AS bigint) - ${2 * CHILD_UG}, CAST(:sid AS uuid), CAST(:c2 AS uuid), ''),
  (CAST(:c1 AS uuid), 1, 'split_in', ${CHILD_UG}, ${CHILD_UG}, CAST(:sid AS uuid), CAST(:pid AS uuid), ''),
  (CAST(:c2 AS uuid), 1, 'split_in', ${CHILD_UG}, ${CHILD_UG}, CAST(:sid AS uuid), CAST(:pid AS uuid), '');
UPDATE items SET mass_ug = CAST(:m AS bigint) - ${2 * CHILD_UG}, updated_at = now() WHERE id = CAST(:pid AS uuid);
SELECT * FROM trail_append(NULL, '{"action":"item.split","actor":{"id":null,"label":"pgbench"},"after":{},"at":"' || to_char(date_trunc('milliseconds', now()) AT TIME ZONE 'UTC', 'YYYY-MM-DD"T"HH24:MI:SS.MS"Z"') || '","before":{},"seq":',
  ',"subject":{"id":"' || CAST(:pid AS text) || '","type":"item"}}', date_trunc('milliseconds', now()), NULL, 'pgbench', 'item.split', 'item', CAST(:pid AS text), '{}', '{}', false);
COMMIT;
`
	);
	const pgbench = join(pgBinDir() ?? '/usr/lib/postgresql/15/bin', 'pgbench');
	if (!existsSync(pgbench)) throw new Error(`pgbench is missing at ${pgbench}`);
	const cpu1 = machineCpu();
	const bench = spawnSync(
		pgbench,
		['-n', '-M', 'prepared', '-c', String(CLIENTS), '-j', String(CLIENTS), '-T', String(SECONDS), '-f', script, '-h', '127.0.0.1', '-p', env.REGOLOG_DB_PORT, '-U', env.REGOLOG_DB_USER, env.REGOLOG_DB_NAME],
		{ encoding: 'utf8', env: { ...process.env, PGPASSWORD: env.REGOLOG_DB_PASSWORD } }
	);
	const tpsMatch = /tps = ([\d.]+) \(without initial connection time\)/.exec(bench.stdout);
	if (!tpsMatch) throw new Error(`pgbench gave no figure:\n${bench.stdout}\n${bench.stderr}`);
	const failedMatch = /number of failed transactions: (\d+)/.exec(bench.stdout);
	const pgTps = Number(tpsMatch[1]);
	const pgBusy = busySince(cpu1);

	// ── lineage: one parent with 10,000 descendants on twelve levels
	const { formatCode } = await import('../src/lib/domain/codes.ts');
	const code = (serial) => formatCode('BNL', serial);
	await db.query(`INSERT INTO collections (prefix, name, kind, reserve_fraction, loss_tolerance_ug) VALUES ('BNL', 'Benchmark lineage', 'laboratory_analogue', 0.5, 1000)`);
	const root = await api('POST', '/api/items', { collection: 'BNL', massUg: 100_000_000, description: 'lineage benchmark parent' });
	const sizes = [4, 16, 64, 256, 900, 1100, 1200, 1300, 1300, 1300, 1300, 1260];
	const { rows: [r0] } = await db.query('SELECT id, collection_id FROM items WHERE code = $1', [root.body.item.code]);
	let previous = [r0.id];
	let serial = 2;
	for (const [k, n] of sizes.entries()) {
		const level = Array.from({ length: n }, (_, i) => ({ serial: serial + i, code: code(serial + i), parent: previous[i % previous.length] }));
		serial += n;
		const { rows } = await db.query(
			`INSERT INTO items (collection_id, serial, code, parent_id, depth, kind, description, initial_mass_ug, mass_ug)
			 SELECT $1, x.serial, x.code, x.parent, $2, 'aliquot', 'lineage benchmark aliquot', 10, 10
			 FROM jsonb_to_recordset($3::jsonb) AS x(serial bigint, code text, parent uuid) RETURNING id`,
			[r0.collection_id, k + 1, JSON.stringify(level)]
		);
		previous = rows.map((r) => r.id);
	}
	await db.query(`UPDATE collections SET next_serial = $1 WHERE prefix = 'BNL'`, [serial]);
	// the steady state autovacuum keeps: statistics and visibility map up to date
	await db.query('VACUUM ANALYZE items');
	const leaf = code(serial - 1);
	// `change`: before each request, a split elsewhere in the collection, so that the answer kept
	// from the request before no longer holds and the lineage is computed afresh
	const other = (await api('POST', '/api/items', { collection: 'BNL', massUg: 100_000_000, description: 'lineage benchmark bystander' })).body.item.code;
	const timeLineage = async (target, runs, change = false) => {
		// latency to the answer's last byte (the bytes only), then, in runs of their own, to the
		// answer parsed by this client as well
		const times = [];
		const parsed = [];
		const first = await send('GET', `/api/items/${encodeURIComponent(target)}/lineage`, undefined, true);
		if (first.status !== 200) throw new Error(`lineage failed: ${first.body}`);
		const answer = JSON.parse(first.body.toString('utf8'));
		const size = answer.descendants.length + answer.ancestors.length;
		const length = first.body.length;
		for (const parse of [false, true]) {
			for (let i = 0; i < runs + 5; i++) {
				if (change && (await api('POST', `/api/items/${encodeURIComponent(other)}/splits`, { children: [{ massUg: 10 }] })).status !== 201) throw new Error('the bystander split failed');
				const s = performance.now();
				const r = await send('GET', `/api/items/${encodeURIComponent(target)}/lineage`, undefined, !parse);
				const done = performance.now();
				if (r.status !== 200) throw new Error(`lineage failed: ${r.body}`);
				// every answer is the whole lineage (the bystander is in another tree)
				if (parse ? r.body.descendants.length + r.body.ancestors.length !== size : r.body.length !== length) throw new Error('a lineage answer differs from the first');
				if (i >= 5) (parse ? parsed : times).push((parse ? done : r.lastByte) - s);
			}
		}
		const pct = (list, p) => [...list].sort((a, b) => a - b)[Math.min(list.length - 1, Math.ceil((p / 100) * list.length) - 1)];
		return { p50: pct(times, 50), p95: pct(times, 95), max: Math.max(...times), parsedP50: pct(parsed, 50), parsedP95: pct(parsed, 95), size, runs };
	};
	const whole = await timeLineage(root.body.item.code, LINEAGE_RUNS);
	const cold = await timeLineage(root.body.item.code, LINEAGE_RUNS, true);
	const up = await timeLineage(leaf, LINEAGE_RUNS);
	// an aliquot's lineage walks its subtree level by level (a root's is its whole tree, read at once)
	const branch = code(2);
	const branchCold = await timeLineage(branch, Math.min(LINEAGE_RUNS, 30), true);
	await db.end();

	const f = (x, d = 1) => x.toFixed(d);
	console.log('\nRegolog split benchmark');
	console.log(`  HTTP API, ${CLIENTS} clients on distinct parents, ${SECONDS} s: ${f(httpTps)} splits/s (${httpDone} splits, ${httpFailed} refused)`);
	console.log(`  pgbench, same transaction, ${CLIENTS} clients, ${SECONDS} s:   ${f(pgTps)} tx/s${failedMatch ? ` (${failedMatch[1]} failed)` : ''}`);
	console.log(`  ratio HTTP / pgbench: ${f(httpTps / pgTps, 2)}  (target ≥ 0.4)`);
	console.log(`    all ${cpus().length} cores busy ${f(httpBusy, 0)} % during the HTTP run (this benchmark's own HTTP clients: ${f(clientMsPerSplit, 2)} ms CPU per split), ${f(pgBusy, 0)} % during pgbench`);
	const both = (x) => `p50 ${f(x.p50)} ms, p95 ${f(x.p95)} ms (max ${f(x.max)}) to the last byte; p50 ${f(x.parsedP50)} ms, p95 ${f(x.parsedP95)} ms with JSON.parse in this client`;
	console.log(`  lineage of a parent with ${whole.size} descendants on ${sizes.length} levels, ${LINEAGE_RUNS} requests (target p95 < 50 ms):`);
	console.log(`    repeated, answered from memory (nothing changed since the last request): ${both(whole)}`);
	console.log(`    computed afresh after a change elsewhere in the collection, ${cold.runs} requests: ${both(cold)}`);
	console.log(`  lineage of a leaf ${sizes.length} levels down (${up.size} ancestors): ${both(up)}`);
	console.log(`  lineage of an aliquot one level down (${branchCold.size - 1} descendants, walked level by level), computed afresh: ${both(branchCold)}`);
} catch (e) {
	console.error(`[regolog] benchmark failed: ${e.message}`);
	process.exitCode = 1;
} finally {
	log('stopping the benchmark stack');
	stop();
}
