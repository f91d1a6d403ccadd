// Load data for benchmarks: a migrated and seeded database with, beside the demo scenario, a
// generated collection of specimens split into trees of aliquots (with their splits and mass
// ledgers, reconciling to the microgram) and a hash chain of trail events that verifies.
//
//   node --import tsx scripts/gen-load.ts [--items 100000] [--events 1000000] [--db regolog_load]
//
// It starts (or reuses) the benchmark cluster under .regolog/bench (port: the test profile's port
// base + 7, or REGOLOG_BENCH_DB_PORT) and recreates the database. Rows are made in PostgreSQL with
// generate_series; only item codes (check characters) and trail hashes are computed here.
import { parseArgs } from 'node:util';
import { resolve } from 'node:path';
import pg from 'pg';
import { Sequelize } from 'sequelize';
import { profile } from './lib/profile.mjs';
import { startCluster, ensureDatabase, DEFAULT_OWNER, DEFAULT_OWNER_PASSWORD } from './lib/pg.mjs';
import { migrateUp } from '../src/lib/server/migrator';
import { seedDemo } from '../src/lib/server/seed';
import { formatCode } from '../src/lib/domain/codes';
import { canonicalEvent, chainHash, GENESIS_HASH, type TrailRow } from '../src/lib/server/trail';

/** Each tree: a specimen split into 7 aliquots, each split again into 6: 50 items. */
export const TREE = 50;
const ROOT_UG = 1_000_000;
const CHILD_UG = 10_000;
const GRANDCHILD_UG = 1_000;
export const LOAD_PREFIX = 'GEN';

export interface LoadOptions {
	items: number;
	events: number;
	dbName: string;
	log?: (s: string) => void;
}

export function benchCluster() {
	const pr = profile('test');
	return { root: resolve('.regolog/bench'), port: Number(process.env.REGOLOG_BENCH_DB_PORT ?? pr.portBase + 7) };
}

function trailEvent(g: number, codes: string[]): Omit<TrailRow, 'prev_hash' | 'hash'> {
	const code = codes[g % codes.length];
	return {
		seq: g,
		at: new Date(Date.UTC(2031, 0, 6, 8) + g * 1000),
		actor_id: null,
		actor_label: 'curator@brightwater.example',
		action: ['item.weighed', 'item.split', 'transfer.dispatched', 'handling.recorded'][g % 4],
		subject_type: 'item',
		subject_id: code,
		before: { massUg: 1_000_000 - (g % 1000) },
		after: { massUg: 1_000_000 - (g % 1000) - 7, note: `generated event ${g}` }
	};
}

/** Builds the load database and returns the codes of a specimen, an aliquot and a leaf. */
export async function generateLoad({ items, events, dbName, log = (s) => console.log(`[gen-load] ${s}`) }: LoadOptions) {
	const trees = Math.max(1, Math.round(items / TREE));
	const { root, port } = benchCluster();
	const cluster = await startCluster({ root, port, log: () => {} });
	const user = process.env.REGOLOG_DB_USER ?? 'regolog';
	const password = process.env.REGOLOG_DB_PASSWORD ?? 'regolog-local';
	await ensureDatabase({ port, password: cluster.password, dbName, user, userPassword: password, fresh: true });
	const sequelize = new Sequelize(dbName, user, password, { host: '127.0.0.1', port, dialect: 'postgres', dialectModule: pg, logging: false });
	// generated rows, the trail's among them, are written as the owner role: the app's role may append to the trail only through trail_append()
	const c = new pg.Client({ host: '127.0.0.1', port, user: process.env.REGOLOG_DB_OWNER ?? DEFAULT_OWNER, password: process.env.REGOLOG_DB_OWNER_PASSWORD ?? DEFAULT_OWNER_PASSWORD, database: dbName });
	const t0 = performance.now();
	try {
		await migrateUp(sequelize);
		await seedDemo(sequelize, { log: () => {} });
		await c.connect();
		const n = trees * TREE;
		await c.query(`
			INSERT INTO collections (prefix, name, kind, description, allowed_atmospheres, allowed_contact_materials, max_air_exposure_min,
			                         reserve_fraction, loss_tolerance_ug, loss_tolerance_fraction, next_serial)
			SELECT $1, 'Generated load collection', kind, 'Generated for benchmarks', allowed_atmospheres, allowed_contact_materials,
			       max_air_exposure_min, reserve_fraction, loss_tolerance_ug, loss_tolerance_fraction, $2
			FROM collections WHERE prefix = 'HLF'`, [LOAD_PREFIX, n + 1]);
		const codes = Array.from({ length: n }, (_, i) => formatCode(LOAD_PREFIX, i + 1));
		await c.query('CREATE TEMP TABLE gen_codes (serial bigint PRIMARY KEY, code text NOT NULL)');
		await c.query('INSERT INTO gen_codes SELECT ord, code FROM unnest($1::text[]) WITH ORDINALITY AS u(code, ord)', [codes]);
		// position in the tree: 0 the specimen; 1, 8, 15, … the aliquots; the rest their children
		await c.query(`
			CREATE TEMP TABLE gen_items AS
			SELECT g.serial, g.code, p.pos,
			       CASE WHEN p.pos = 0 THEN 0 WHEN (p.pos - 1) % 7 = 0 THEN 1 ELSE 2 END AS depth,
			       CASE WHEN p.pos = 0 THEN NULL WHEN (p.pos - 1) % 7 = 0 THEN g.serial - p.pos ELSE g.serial - (p.pos - 1) % 7 END AS parent_serial
			FROM gen_codes g CROSS JOIN LATERAL (SELECT ((g.serial - 1) % ${TREE})::int AS pos) p`);
		const id = (what: string, serial: string) => `md5('gen-${what}-' || ${serial})::uuid`;
		const [{ col, op }] = (await c.query(`SELECT (SELECT id FROM collections WHERE prefix = $1) AS col, (SELECT id FROM users WHERE role = 'curator' LIMIT 1) AS op`, [LOAD_PREFIX])).rows;
		const massAfter = `CASE depth WHEN 0 THEN ${ROOT_UG - 7 * CHILD_UG} WHEN 1 THEN ${CHILD_UG - 6 * GRANDCHILD_UG} ELSE ${GRANDCHILD_UG} END`;
		const massBefore = `CASE depth WHEN 0 THEN ${ROOT_UG} WHEN 1 THEN ${CHILD_UG} ELSE ${GRANDCHILD_UG} END`;
		const place = `'Generated store, rack ' || (serial % 40)`;
		await c.query(`
			INSERT INTO items (id, collection_id, serial, code, parent_id, depth, kind, description, initial_mass_ug, mass_ug, container, storage_place, created_by, created_at)
			SELECT ${id('item', 'serial')}, $1, serial, code, NULL, 0, 'specimen', 'Generated specimen', ${massBefore}, ${massAfter}, 'vial', ${place}, $2,
			       timestamptz '2031-01-01' + serial * interval '1 second'
			FROM gen_items WHERE depth = 0`, [col, op]);
		for (const depth of [1, 2]) {
			const each = depth === 1 ? 7 : 6;
			const childUg = depth === 1 ? CHILD_UG : GRANDCHILD_UG;
			const before = depth === 1 ? ROOT_UG : CHILD_UG;
			await c.query(`
				INSERT INTO splits (id, parent_id, parent_before_ug, parent_after_ug, children_total_ug, loss_ug, loss_u_ug, reweighed, verdict, operator_id, at)
				SELECT ${id('split', 'serial')}, ${id('item', 'serial')}, ${before}, ${before - each * childUg}, ${each * childUg}, 0, 0, false, 'ok', $1,
				       timestamptz '2031-02-01' + serial * interval '1 second'
				FROM gen_items WHERE depth = ${depth - 1}`, [op]);
			await c.query(`
				INSERT INTO items (id, collection_id, serial, code, parent_id, depth, kind, description, initial_mass_ug, mass_ug, container, storage_place, split_id, created_by, created_at)
				SELECT ${id('item', 'serial')}, $1, serial, code, ${id('item', 'parent_serial')}, depth, 'aliquot', 'Generated aliquot', ${massBefore}, ${massAfter}, 'vial', ${place},
				       ${id('split', 'parent_serial')}, $2, timestamptz '2031-02-01' + serial * interval '1 second'
				FROM gen_items WHERE depth = ${depth}`, [col, op]);
		}
		// ledgers: the specimen registered; each parent gives its children their mass; each child receives it
		await c.query(`
			INSERT INTO ledger_entries (item_id, seq, kind, delta_ug, balance_after_ug, note, actor_id)
			SELECT ${id('item', 'serial')}, 1, 'registered', ${ROOT_UG}, ${ROOT_UG}, 'registered', $1 FROM gen_items WHERE depth = 0`, [op]);
		await c.query(`
			INSERT INTO ledger_entries (item_id, seq, kind, delta_ug, balance_after_ug, split_id, counterpart_id, note, actor_id)
			SELECT ${id('item', 'k.parent_serial')}, row_number() OVER (PARTITION BY k.parent_serial ORDER BY k.serial) + CASE WHEN p.depth = 0 THEN 1 ELSE 1 END,
			       'split_out', -(CASE k.depth WHEN 1 THEN ${CHILD_UG} ELSE ${GRANDCHILD_UG} END),
			       (CASE p.depth WHEN 0 THEN ${ROOT_UG} ELSE ${CHILD_UG} END) - (CASE k.depth WHEN 1 THEN ${CHILD_UG} ELSE ${GRANDCHILD_UG} END) * row_number() OVER (PARTITION BY k.parent_serial ORDER BY k.serial),
			       ${id('split', 'k.parent_serial')}, ${id('item', 'k.serial')}, 'to ' || k.code, $1
			FROM gen_items k JOIN gen_items p ON p.serial = k.parent_serial`, [op]);
		await c.query(`
			INSERT INTO ledger_entries (item_id, seq, kind, delta_ug, balance_after_ug, split_id, counterpart_id, note, actor_id)
			SELECT ${id('item', 'k.serial')}, 1, 'split_in', ${massBefore.replaceAll('depth', 'k.depth')}, ${massBefore.replaceAll('depth', 'k.depth')},
			       ${id('split', 'k.parent_serial')}, ${id('item', 'k.parent_serial')}, 'from ' || p.code, $1
			FROM gen_items k JOIN gen_items p ON p.serial = k.parent_serial`, [op]);
		log(`${n.toLocaleString('en')} items in ${trees.toLocaleString('en')} trees with splits and ledgers in ${((performance.now() - t0) / 1000).toFixed(1)} s`);

		// the trail: seeded events first, then generated ones continuing the chain
		const t1 = performance.now();
		const [last] = (await c.query('SELECT seq, hash FROM trail_events ORDER BY seq DESC LIMIT 1')).rows;
		let prev: string = last?.hash ?? GENESIS_HASH;
		const start = Number(last?.seq ?? 0) + 1;
		const BATCH = 50_000;
		for (let lo = start; lo < start + events; lo += BATCH) {
			const hi = Math.min(start + events - 1, lo + BATCH - 1);
			const rows: { seq: number[]; at: string[]; subject: string[]; action: string[]; before: string[]; after: string[]; prev: string[]; hash: string[] } = { seq: [], at: [], subject: [], action: [], before: [], after: [], prev: [], hash: [] };
			for (let g = lo; g <= hi; g++) {
				const e = trailEvent(g, codes);
				const h = chainHash(prev, canonicalEvent(e));
				rows.seq.push(g); rows.at.push(e.at.toISOString()); rows.subject.push(e.subject_id); rows.action.push(e.action);
				rows.before.push(JSON.stringify(e.before)); rows.after.push(JSON.stringify(e.after)); rows.prev.push(prev); rows.hash.push(h);
				prev = h;
			}
			await c.query(
				`INSERT INTO trail_events (seq, at, actor_id, actor_label, action, subject_type, subject_id, before, after, prev_hash, hash)
				 SELECT s, a::timestamptz, NULL, 'curator@brightwater.example', act, 'item', sub, b::jsonb, af::jsonb, p, h
				 FROM unnest($1::bigint[], $2::text[], $3::text[], $4::text[], $5::text[], $6::text[], $7::text[], $8::text[]) AS x(s, a, sub, act, b, af, p, h)`,
				[rows.seq, rows.at, rows.subject, rows.action, rows.before, rows.after, rows.prev, rows.hash]
			);
		}
		await c.query('ANALYZE');
		log(`${events.toLocaleString('en')} trail events in ${((performance.now() - t1) / 1000).toFixed(1)} s`);
		return { port, dbName, specimen: codes[0], aliquot: codes[1], leaf: codes[2], items: n, clusterRoot: root, clusterStarted: !cluster.reused };
	} finally {
		await c.end().catch(() => {});
		await sequelize.close();
	}
}

if (import.meta.url === `file://${process.argv[1]}`) {
	const { values } = parseArgs({ options: { items: { type: 'string', default: '100000' }, events: { type: 'string', default: '1000000' }, db: { type: 'string', default: 'regolog_load' } } });
	const r = await generateLoad({ items: Number(values.items), events: Number(values.events), dbName: values.db });
	console.log(`[gen-load] database ${r.dbName} on 127.0.0.1:${r.port}: ${r.items} generated items; e.g. ${r.specimen}, ${r.aliquot}, ${r.leaf}`);
}
