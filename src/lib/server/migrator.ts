import { Umzug, SequelizeStorage } from 'umzug';
import { readdirSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { pathToFileURL } from 'node:url';
import type { Sequelize, QueryInterface } from 'sequelize';
import { config } from './config';
import { ownerConnection } from './db';

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
	const { owner, app } = roles(sequelize);
	const files = readdirSync(dir)
		.filter((f) => /^\d{4}-.*\.js$/.test(f))
		.sort();
	const umzug = new Umzug<MigrationContext>({
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
		context: { queryInterface: owner.getQueryInterface(), sequelize: owner },
		storage: new SequelizeStorage({ sequelize: owner, tableName: 'schema_migrations' }),
		logger: undefined
	});
	// after every up or down, however far: the app's rights on what the migrations made
	umzug.on('afterCommand', () => grantAppPrivileges(owner, app));
	return umzug;
}

/** Owner connections opened for a migrator given the app's connection, one per database. */
const ownerConnections = new Map<string, Sequelize>();

/**
 * The connection migrations run on, and the app role to grant: given the owner's connection, that
 * one; given the app's, an owner connection to the same database (kept for later migrators).
 */
function roles(sequelize: Sequelize): { owner: Sequelize; app: string } {
	if (sequelize.config.username === config.db.owner) return { owner: sequelize, app: config.db.user };
	const c = sequelize.config;
	const key = `${c.host}:${c.port}/${c.database}`;
	let owner = ownerConnections.get(key);
	if (!owner) ownerConnections.set(key, (owner = ownerConnection(sequelize)));
	return { owner, app: c.username };
}

/** Closes the owner connections migrators opened (scripts call it before they exit). */
export async function closeOwnerConnections(): Promise<void> {
	const all = [...ownerConnections.values()];
	ownerConnections.clear();
	await Promise.all(all.map((s) => s.close()));
}

/**
 * Tables the app may only read and append to (INSERT, SELECT). trail_events is not even that: the
 * app appends to it only through trail_append() (migration 0080), which runs with its owner's
 * rights and computes the link and the hash itself.
 */
export const APPEND_ONLY_TABLES = ['trail_keys', 'trail_checkpoints'];
export const APPEND_THROUGH_FUNCTION = ['trail_events'];

const ident = (s: string) => '"' + s.replace(/"/g, '""') + '"';

/**
 * The app role's rights, granted afresh after every batch of migrations (idempotent), so a table
 * any migration creates is reachable by the app without that migration saying so, and the trail's
 * tables never are writable: the rule is in DEVELOPERS.md ("Database roles"). Rights on tables:
 * SELECT, INSERT, UPDATE, DELETE (never TRUNCATE, REFERENCES or TRIGGER); on sequences USAGE,
 * SELECT, UPDATE; functions keep PostgreSQL's default EXECUTE for everybody. The default
 * privileges make a table the owner creates outside the migrator (a test's own table) reachable
 * too; the append-only tables are still narrowed here.
 */
export async function grantAppPrivileges(owner: Sequelize, app = config.db.user): Promise<void> {
	const a = ident(app);
	const [existing] = (await owner.query(`SELECT tablename FROM pg_tables WHERE schemaname = 'public'`)) as [{ tablename: string }[], unknown];
	const have = new Set(existing.map((r) => r.tablename));
	const narrow = [...APPEND_ONLY_TABLES, ...APPEND_THROUGH_FUNCTION].filter((t) => have.has(t));
	await owner.query(`
		GRANT USAGE ON SCHEMA public TO ${a};
		REVOKE ALL ON ALL TABLES IN SCHEMA public FROM ${a};
		GRANT SELECT, INSERT, UPDATE, DELETE ON ALL TABLES IN SCHEMA public TO ${a};
		GRANT USAGE, SELECT, UPDATE ON ALL SEQUENCES IN SCHEMA public TO ${a};
		ALTER DEFAULT PRIVILEGES IN SCHEMA public GRANT SELECT, INSERT, UPDATE, DELETE ON TABLES TO ${a};
		ALTER DEFAULT PRIVILEGES IN SCHEMA public GRANT USAGE, SELECT, UPDATE ON SEQUENCES TO ${a};
		${narrow.map((t) => `REVOKE ALL ON ${ident(t)} FROM ${a}; GRANT SELECT${APPEND_ONLY_TABLES.includes(t) ? ', INSERT' : ''} ON ${ident(t)} TO ${a};`).join('\n\t\t')}
	`);
}

/**
 * Runs the pending migrations as the owner role, and grants the app role its rights afterwards (as
 * every command of a migrator does). Given a connection as the app role (as the scripts and tests
 * hold), it runs them on an owner connection to the same database, closed afterwards.
 */
export async function migrateUp(sequelize: Sequelize): Promise<string[]> {
	const asOwner = sequelize.config.username === config.db.owner;
	const done = await migrator(sequelize).up();
	if (!asOwner) {
		const c = sequelize.config;
		const key = `${c.host}:${c.port}/${c.database}`;
		await ownerConnections.get(key)?.close();
		ownerConnections.delete(key);
	}
	return done.map((m) => m.name);
}
