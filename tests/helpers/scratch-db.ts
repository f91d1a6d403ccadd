import pg from 'pg';
import { Sequelize } from 'sequelize';
import { randomBytes } from 'node:crypto';

function adminClient(database = 'postgres') {
	const password = process.env.REGOLOG_PG_ADMIN_PASSWORD;
	if (!password) throw new Error('REGOLOG_PG_ADMIN_PASSWORD is not set: run the tests through `npm test`');
	return new pg.Client({
		host: process.env.REGOLOG_DB_HOST ?? '127.0.0.1',
		port: Number(process.env.REGOLOG_DB_PORT ?? 24320),
		user: 'postgres',
		password,
		database
	});
}

/** Runs SQL as the cluster's superuser (for tests that must bypass the app's own rights). */
export async function asSuperuser<T>(database: string, fn: (c: pg.Client) => Promise<T>): Promise<T> {
	const c = adminClient(database);
	await c.connect();
	try {
		return await fn(c);
	} finally {
		await c.end();
	}
}

export const OWNER_ROLE = process.env.REGOLOG_DB_OWNER ?? 'regolog_owner';

/**
 * Runs SQL as the owner role of the schema (REGOLOG_DB_OWNER), which owns the trail's tables,
 * triggers and functions: for tests that need the powers the app's own role lacks.
 */
export async function asOwner<T>(database: string, fn: (c: pg.Client) => Promise<T>): Promise<T> {
	const c = new pg.Client({
		host: process.env.REGOLOG_DB_HOST ?? '127.0.0.1',
		port: Number(process.env.REGOLOG_DB_PORT ?? 24320),
		user: OWNER_ROLE,
		password: process.env.REGOLOG_DB_OWNER_PASSWORD ?? 'regolog-owner-local',
		database
	});
	await c.connect();
	try {
		return await fn(c);
	} finally {
		await c.end();
	}
}

/**
 * Tampers with the trail as only its owner can: in one transaction, with the append-only triggers
 * of the trail's tables off (for that transaction alone: ALTER TABLE is transactional, and its lock
 * keeps everybody else out meanwhile), runs the SQL, and switches them on again.
 */
export async function tamperTrail(database: string, sql: string, params: unknown[] = []): Promise<void> {
	const tables = ['trail_events', 'trail_checkpoints', 'trail_keys'];
	await asOwner(database, async (c) => {
		await c.query('BEGIN');
		try {
			for (const t of tables) await c.query(`ALTER TABLE ${t} DISABLE TRIGGER USER`);
			await c.query(sql, params);
			for (const t of tables) await c.query(`ALTER TABLE ${t} ENABLE TRIGGER USER`);
			await c.query('COMMIT');
		} catch (e) {
			await c.query('ROLLBACK');
			throw e;
		}
	});
}

/**
 * A new, empty database owned by the owner role, and a Sequelize connected to it as the app role
 * (migrateUp runs the migrations as the owner and grants the app its rights).
 */
export async function scratchDatabase(tag: string) {
	const name = `regolog_${tag}_${randomBytes(4).toString('hex')}`;
	const user = process.env.REGOLOG_DB_USER ?? 'regolog';
	await asSuperuser('postgres', (c) => c.query(`CREATE DATABASE "${name}" OWNER "${OWNER_ROLE}"`));
	const sequelize = new Sequelize(name, user, process.env.REGOLOG_DB_PASSWORD ?? 'regolog-local', {
		host: process.env.REGOLOG_DB_HOST ?? '127.0.0.1',
		port: Number(process.env.REGOLOG_DB_PORT ?? 24320),
		dialect: 'postgres',
		dialectModule: pg,
		logging: false
	});
	return {
		name,
		sequelize,
		async drop() {
			await sequelize.close();
			await asSuperuser('postgres', (c) => c.query(`DROP DATABASE IF EXISTS "${name}" WITH (FORCE)`));
		}
	};
}

/**
 * Columns that change on their own, without any request: the mail sender moves queued messages to
 * sent whenever the relay answers. A message a request added still shows as a new row.
 */
const BY_ITSELF: Record<string, string[]> = {
	mail_outbox: ['status', 'attempts', 'next_attempt_at', 'last_error', 'sent_at']
};

/**
 * Tables only the background jobs write, on their own schedule (src/lib/server/jobs.ts): the jobs'
 * own bookkeeping and the trail's signed checkpoints of its head. Left out of snapshots.
 */
const WRITTEN_BY_JOBS = ['job_runs', 'trail_checkpoints'];

/** Messages the background jobs queue on their own schedule (checkpoints to the witnesses, reminders). */
const QUEUED_BY_JOBS: Record<string, (row: Record<string, unknown>) => boolean> = {
	mail_outbox: (r) => r.kind === 'trail_checkpoint' || r.kind === 'usage.overdue'
};

/**
 * Every row of every table in the public schema, as sorted JSON, for before/after comparisons
 * (without the columns that change by themselves, BY_ITSELF, the tables only background jobs
 * write, WRITTEN_BY_JOBS, and the messages they queue, QUEUED_BY_JOBS).
 */
export async function snapshot(sequelize: Sequelize, except: string[] = ['schema_migrations']) {
	const [tables] = (await sequelize.query(
		`SELECT tablename FROM pg_tables WHERE schemaname = 'public' ORDER BY tablename`
	)) as [{ tablename: string }[], unknown];
	const out: Record<string, string[]> = {};
	for (const { tablename } of tables) {
		if (except.includes(tablename) || WRITTEN_BY_JOBS.includes(tablename)) continue;
		const [all] = await sequelize.query(`SELECT * FROM "${tablename}"`);
		const skip = BY_ITSELF[tablename] ?? [];
		const byJobs = QUEUED_BY_JOBS[tablename];
		const rows = (all as Record<string, unknown>[]).filter((r) => !byJobs?.(r)).map((r) => Object.fromEntries(Object.entries(r).filter(([k]) => !skip.includes(k))));
		out[tablename] = (rows as object[]).map((r) => JSON.stringify(r)).sort();
	}
	return out;
}
