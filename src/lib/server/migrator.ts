import { Umzug, SequelizeStorage } from 'umzug';
import { readdirSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { pathToFileURL } from 'node:url';
import type { Sequelize, QueryInterface } from 'sequelize';

export interface MigrationContext {
	queryInterface: QueryInterface;
	sequelize: Sequelize;
}

type MigrationModule = {
	up: (ctx: MigrationContext) => Promise<void>;
	down?: (ctx: MigrationContext) => Promise<void>;
};

/**
 * Umzug over the SQL migrations in migrations/, recorded in the table "schema_migrations".
 * Convention: a migration sends its statements as one multi-statement query, which PostgreSQL
 * runs as one implicit transaction, so a failing migration leaves nothing half-done.
 */
export function migrator(sequelize: Sequelize, dir = resolve(process.cwd(), 'migrations')) {
	const files = readdirSync(dir)
		.filter((f) => /^\d{4}-.*\.js$/.test(f))
		.sort();
	return new Umzug<MigrationContext>({
		migrations: files.map((f) => {
			const path = join(dir, f);
			const load = async () => (await import(pathToFileURL(path).href)) as MigrationModule;
			return {
				name: f,
				path,
				up: async ({ context }) => {
					await (await load()).up(context);
				},
				down: async ({ context }) => {
					const m = await load();
					if (!m.down) throw new Error(`migration ${f} cannot be undone`);
					await m.down(context);
				}
			};
		}),
		context: { queryInterface: sequelize.getQueryInterface(), sequelize },
		storage: new SequelizeStorage({ sequelize, tableName: 'schema_migrations' }),
		logger: undefined
	});
}

export async function migrateUp(sequelize: Sequelize): Promise<string[]> {
	const done = await migrator(sequelize).up();
	return done.map((m) => m.name);
}
