import pg from 'pg';
import { Sequelize } from 'sequelize';
import { randomBytes } from 'node:crypto';

function adminClient(database = 'postgres') {
	const password = process.env.REGOLOG_PG_ADMIN_PASSWORD;
	if (!password) throw new Error('REGOLOG_PG_ADMIN_PASSWORD is not set: run the tests through `npm test`');
	return new pg.Client({
		host: process.env.REGOLOG_DB_HOST ?? '127.0.0.1',
		port: Number(process.env.REGOLOG_DB_PORT ?? 54320),
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

/** A new, empty database owned by the app role, and a Sequelize connected to it. */
export async function scratchDatabase(tag: string) {
	const name = `regolog_${tag}_${randomBytes(4).toString('hex')}`;
	const user = process.env.REGOLOG_DB_USER ?? 'regolog';
	await asSuperuser('postgres', (c) => c.query(`CREATE DATABASE "${name}" OWNER "${user}"`));
	const sequelize = new Sequelize(name, user, process.env.REGOLOG_DB_PASSWORD ?? 'regolog-local', {
		host: process.env.REGOLOG_DB_HOST ?? '127.0.0.1',
		port: Number(process.env.REGOLOG_DB_PORT ?? 54320),
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
 * Every row of every table in the public schema, as sorted JSON, for before/after comparisons
 * (without the columns that change by themselves, BY_ITSELF).
 */
export async function snapshot(sequelize: Sequelize, except: string[] = ['schema_migrations']) {
	const [tables] = (await sequelize.query(
		`SELECT tablename FROM pg_tables WHERE schemaname = 'public' ORDER BY tablename`
	)) as [{ tablename: string }[], unknown];
	const out: Record<string, string[]> = {};
	for (const { tablename } of tables) {
		if (except.includes(tablename)) continue;
		const [all] = await sequelize.query(`SELECT * FROM "${tablename}"`);
		const skip = BY_ITSELF[tablename] ?? [];
		const rows = (all as Record<string, unknown>[]).map((r) => Object.fromEntries(Object.entries(r).filter(([k]) => !skip.includes(k))));
		out[tablename] = (rows as object[]).map((r) => JSON.stringify(r)).sort();
	}
	return out;
}
