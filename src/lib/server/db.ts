import { Sequelize } from 'sequelize';
import pg from 'pg';
import { config } from './config';

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
			logging: false,
			pool: { max: config.db.poolMax, min: 0, idle: 10_000, acquire: 20_000 },
			define: { underscored: true, timestamps: true }
		});
	}
	return instance;
}

export async function closeDb(): Promise<void> {
	if (instance) {
		const s = instance;
		instance = null;
		await s.close();
	}
}
