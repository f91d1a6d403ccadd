import { createHash } from 'node:crypto';
import type pg from 'pg';
import type { Sequelize, Transaction } from 'sequelize';
import { countQuery } from './db';

/**
 * Statements sent often enough that parsing and planning them anew each time costs more than
 * running them (a split's write is planned in about as long as it runs). They go as named prepared
 * statements on the transaction's own connection (PostgreSQL documentation, PREPARE: "prepared
 * statements only last for the duration of the current database session"; node-postgres prepares a
 * named query once per connection and then only binds and executes it).
 *
 * The SQL uses `:name` placeholders like Sequelize's replacements; they become $1, $2, … in order of
 * first appearance, and every value goes as a parameter, never into the text. A placeholder whose
 * type PostgreSQL cannot infer (in a SELECT list, say) needs a cast in the SQL.
 */
interface Compiled {
	name: string;
	text: string;
	params: string[];
}
const compiled = new Map<string, Compiled>();
const PLACEHOLDER = /(?<![:\w]):([A-Za-z_]\w*)/g;

function compile(sql: string): Compiled {
	let c = compiled.get(sql);
	if (!c) {
		const params: string[] = [];
		const text = sql.replace(PLACEHOLDER, (_, name: string) => {
			let i = params.indexOf(name);
			if (i < 0) i = params.push(name) - 1;
			return `$${i + 1}`;
		});
		c = { name: `regolog_${createHash('sha256').update(text).digest('hex').slice(0, 24)}`, text, params };
		compiled.set(sql, c);
	}
	return c;
}

async function run<T extends object>(connection: pg.ClientBase, sql: string, values: Record<string, unknown>): Promise<T[]> {
	const c = compile(sql);
	const args = c.params.map((p) => {
		if (!(p in values)) throw new Error(`prepared statement: no value for :${p}`);
		const v = values[p];
		return v === undefined ? null : v;
	});
	countQuery();
	const r = await connection.query<T>({ name: c.name, text: c.text, values: args });
	return r.rows;
}

/** Runs one statement as a prepared statement inside the transaction; the rows it returns. */
export async function preparedQuery<T extends object>(t: Transaction, sql: string, values: Record<string, unknown>): Promise<T[]> {
	const connection = (t as unknown as { connection?: pg.ClientBase }).connection;
	if (!connection) throw new Error('prepared statement: the transaction has no connection yet');
	return run<T>(connection, sql, values);
}

interface Pool {
	getConnection(options: { type: 'read' | 'write' }): Promise<PooledConnection>;
	releaseConnection(connection: pg.ClientBase): Promise<void> | void;
}

/** A connection of Sequelize's pool; one marked invalid is discarded instead of used again. */
export type PooledConnection = pg.ClientBase & { _invalid?: boolean };

/** Runs `fn` on a connection of Sequelize's pool, outside any transaction, and gives it back. */
export async function withPooledConnection<T>(sq: Sequelize, fn: (connection: PooledConnection) => Promise<T>): Promise<T> {
	const pool = (sq as unknown as { connectionManager: Pool }).connectionManager;
	const connection = await pool.getConnection({ type: 'read' });
	try {
		return await fn(connection);
	} finally {
		await pool.releaseConnection(connection);
	}
}

/**
 * Runs one read-only statement, outside any transaction, as a prepared statement on a connection
 * of Sequelize's pool (one statement: one snapshot); the rows it returns.
 */
export async function preparedRead<T extends object>(sq: Sequelize, sql: string, values: Record<string, unknown>): Promise<T[]> {
	return withPooledConnection(sq, (connection) => run<T>(connection, sql, values));
}

/** For tests: the text and parameter order a statement is prepared with. */
export const compiledForTest = compile;
