import { Sequelize } from 'sequelize';
import pg from 'pg';
import { AsyncLocalStorage } from 'node:async_hooks';
import { config } from './config';

/**
 * With REGOLOG_COUNT_QUERIES=1 every answer carries `x-regolog-queries`, the number of SQL
 * statements sent through Sequelize while it was made: the page benchmark uses it to show that no
 * page load sends more queries as the registry grows.
 */
export const countQueries = process.env.REGOLOG_COUNT_QUERIES === '1';
export const queryCount = new AsyncLocalStorage<{ n: number }>();

/** Counts one statement sent outside Sequelize's logging (prepared statements, COPY). */
export function countQuery(): void {
	if (!countQueries) return;
	const c = queryCount.getStore();
	if (c) c.n++;
}

// BIGINT (int8) columns hold micrograms. Parse them to JS numbers, refusing anything a
// double cannot hold exactly, so a mass is never silently rounded.
pg.types.setTypeParser(20, (text: string) => {
	const n = Number(text);
	if (!Number.isSafeInteger(n)) throw new Error(`integer ${text} is beyond exact range`);
	return n;
});

let instance: Sequelize | null = null;

/** The one Sequelize connection of the process. */
export function db(): Sequelize {
	if (!instance) {
		instance = new Sequelize(config.db.name, config.db.user, config.db.password, {
			host: config.db.host,
			port: config.db.port,
			dialect: 'postgres',
			dialectModule: pg,
			logging: countQueries ? countQuery : false,
			pool: { max: config.db.poolMax, min: 0, idle: 10_000, acquire: 20_000 },
			define: { underscored: true, timestamps: true }
		});
	}
	return instance;
}

/**
 * A connection as the owner role (REGOLOG_DB_OWNER) to the database `like` is connected to: for
 * migrations and the migrator's grants only. The app itself never holds one.
 */
export function ownerConnection(like: Sequelize): Sequelize {
	const c = like.config;
	return new Sequelize(c.database, config.db.owner, config.db.ownerPassword, {
		host: c.host,
		port: Number(c.port),
		dialect: 'postgres',
		dialectModule: pg,
		logging: false,
		pool: { max: 2, min: 0 }
	});
}

export async function closeDb(): Promise<void> {
	if (instance) {
		const s = instance;
		instance = null;
		await s.close();
	}
}
