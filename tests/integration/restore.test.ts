import { describe, it, expect, afterAll } from 'vitest';
import { mkdtempSync, rmSync, statSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { spawnSync } from 'node:child_process';
import pg from 'pg';
import { Sequelize } from 'sequelize';
import { startCluster, stopCluster, ensureDatabase, clusterDir, pgBinDir } from '../../scripts/lib/pg.mjs';
import { asSuperuser } from '../helpers/scratch-db';
import { verifyTrail } from '../../src/lib/server/trail';
import { grantAppPrivileges } from '../../src/lib/server/migrator';

/**
 * The restore README.md "Deploying" describes, carried out: the test database dumped with
 * pg_dump as the owner role (custom format, no owners, no privileges), restored with pg_restore
 * into a fresh cluster of its own on the test scheme's scratch database port, as the owner role
 * there, the app role's rights granted as every migrator run grants them; then the trail verifies
 * in the copy, as the app role, and the copy holds what the original held when the dump began.
 */
const root = mkdtempSync(join(process.cwd(), '.regolog', 'restore-'));
const port = Number(process.env.REGOLOG_TEST_PORT_SCRATCH_DB ?? 24323);
const SOURCE = process.env.REGOLOG_DB_NAME ?? 'regolog_test';
const user = process.env.REGOLOG_DB_USER ?? 'regolog';
const password = process.env.REGOLOG_DB_PASSWORD ?? 'regolog-local';
const owner = process.env.REGOLOG_DB_OWNER ?? 'regolog_owner';
const ownerPassword = process.env.REGOLOG_DB_OWNER_PASSWORD ?? 'regolog-owner-local';
const TARGET = 'regolog_restored';
const quiet = () => {};
let restored: Sequelize | null = null;
let restoredOwner: Sequelize | null = null;

afterAll(async () => {
	await restored?.close();
	await restoredOwner?.close();
	stopCluster({ root, log: quiet });
	rmSync(dirname(clusterDir(root, quiet)), { recursive: true, force: true });
	rmSync(root, { recursive: true, force: true });
}, 60_000);

function run(program: string, args: string[]) {
	const r = spawnSync(join(pgBinDir()!, program), args, { env: { ...process.env, PGPASSWORD: ownerPassword }, encoding: 'utf8' });
	if (r.status !== 0) throw new Error(`${program} failed (${r.status}):\n${r.stderr}${r.stdout}`);
	return r;
}

const COUNTED = ['items', 'splits', 'ledger_entries', 'trail_events', 'documents', 'allocation_requests', 'transfers', 'handling_sessions', 'users', 'schema_migrations'];

describe('backup and restore', () => {
	it('a pg_dump of the database restores into a fresh cluster where the trail verifies', async () => {
		const dump = join(root, 'regolog.dump');
		run('pg_dump', ['--format=custom', '--no-owner', '--no-privileges', '-h', process.env.REGOLOG_DB_HOST ?? '127.0.0.1', '-p', String(process.env.REGOLOG_DB_PORT ?? 24320), '-U', owner, '-d', SOURCE, '-f', dump]);
		expect(statSync(dump).size).toBeGreaterThan(10_000);

		const cluster = await startCluster({ root, port, log: quiet });
		expect(cluster.reused).toBe(false);
		await ensureDatabase({ port, password: cluster.password, dbName: TARGET, user, userPassword: password, owner, ownerPassword, fresh: true });
		run('pg_restore', ['--no-owner', '--no-privileges', '--exit-on-error', '--single-transaction', '-h', '127.0.0.1', '-p', String(port), '-U', owner, '-d', TARGET, dump]);
		// the app role's rights, as every migrator run grants them (npm run db:setup -- --no-seed)
		restoredOwner = new Sequelize(TARGET, owner, ownerPassword, { host: '127.0.0.1', port, dialect: 'postgres', dialectModule: pg, logging: false });
		await grantAppPrivileges(restoredOwner, user);

		restored = new Sequelize(TARGET, user, password, { host: '127.0.0.1', port, dialect: 'postgres', dialectModule: pg, logging: false });
		const trail = await verifyTrail(restored);
		expect(trail, JSON.stringify(trail)).toMatchObject({ ok: true, firstBrokenAt: null });
		expect(trail.events).toBeGreaterThan(0);

		// the copy's newest event is the original's event of that number, hash for hash (the original
		// may have gone on since the dump began, but never changes what it had)
		const [[head]] = (await restored.query('SELECT seq::text AS seq, hash::text AS hash FROM trail_events e ORDER BY e.seq DESC LIMIT 1')) as [{ seq: string; hash: string }[], unknown];
		const there = (await asSuperuser(SOURCE, (c) => c.query('SELECT hash::text AS hash FROM trail_events WHERE seq = $1', [head.seq]))).rows[0];
		expect(there?.hash).toBe(head.hash);
		expect(Number(head.seq)).toBe(trail.events);

		// every table came across, none empty that was not, and the schema needs no migration
		const [tables] = (await restored.query(`SELECT tablename FROM pg_tables WHERE schemaname = 'public' ORDER BY 1`)) as [{ tablename: string }[], unknown];
		const original = (await asSuperuser(SOURCE, (c) => c.query(`SELECT tablename FROM pg_tables WHERE schemaname = 'public' ORDER BY 1`))).rows;
		expect(tables).toEqual(original);
		for (const t of COUNTED) {
			const [[{ n }]] = (await restored.query(`SELECT count(*)::int AS n FROM "${t}"`)) as [{ n: number }[], unknown];
			const now = (await asSuperuser(SOURCE, (c) => c.query(`SELECT count(*)::int AS n FROM "${t}"`))).rows[0].n;
			expect(n, t).toBeGreaterThan(0);
			expect(n, t).toBeLessThanOrEqual(now);
		}
		const [migrated] = (await restored.query('SELECT name FROM schema_migrations ORDER BY name')) as [{ name: string }[], unknown];
		const wanted = (await asSuperuser(SOURCE, (c) => c.query('SELECT name FROM schema_migrations ORDER BY name'))).rows;
		expect(migrated).toEqual(wanted);

		// the database's own functions and triggers came along, and still guard the trail
		const routines = `SELECT (SELECT count(*)::int FROM pg_proc p JOIN pg_namespace n ON n.oid = p.pronamespace WHERE n.nspname = 'public') AS functions,
		                         (SELECT count(*)::int FROM pg_trigger WHERE NOT tgisinternal) AS triggers`;
		const [[copy]] = (await restored.query(routines)) as [{ functions: number; triggers: number }[], unknown];
		expect(copy).toEqual((await asSuperuser(SOURCE, (c) => c.query(routines))).rows[0]);
		expect(copy.triggers).toBeGreaterThan(0);
		await expect(restored.query(`DELETE FROM trail_events WHERE seq = 1`)).rejects.toThrow();
	}, 180_000);
});
