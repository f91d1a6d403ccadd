import { describe, it, expect, afterAll } from 'vitest';
import pg from 'pg';
import { randomBytes } from 'node:crypto';
import { Sequelize } from 'sequelize';
import { ensureDatabase } from '../../scripts/lib/pg.mjs';
import { grantAppPrivileges, migrateUp } from '../../src/lib/server/migrator';
import { ownerConnection } from '../../src/lib/server/db';
import { asOwner, asSuperuser, OWNER_ROLE, scratchDatabase } from '../helpers/scratch-db';

const APP = process.env.REGOLOG_DB_USER ?? 'regolog';
const APP_PASSWORD = process.env.REGOLOG_DB_PASSWORD ?? 'regolog-local';
const PORT = Number(process.env.REGOLOG_DB_PORT ?? 24320);

function appClient(database: string) {
	return new pg.Client({ host: '127.0.0.1', port: PORT, user: APP, password: APP_PASSWORD, database });
}
const ownerOf = (db: string, table: string) => asSuperuser(db, async (c) => (await c.query(`SELECT pg_get_userbyid(relowner) AS o FROM pg_class WHERE relname = $1`, [table])).rows[0]?.o);

const dropped: string[] = [];
afterAll(async () => {
	for (const d of dropped) await asSuperuser('postgres', (c) => c.query(`DROP DATABASE IF EXISTS "${d}" WITH (FORCE)`));
});

describe('two database roles', () => {
	it('hands a database the app role owned over to the owner role in place, as npm start does', async () => {
		const name = `regolog_upgrade_${randomBytes(4).toString('hex')}`;
		dropped.push(name);
		// a database as it was before the roles were split: the app's role owns it and what is in it
		await asSuperuser('postgres', (c) => c.query(`CREATE DATABASE "${name}" OWNER "${APP}"`));
		const old = appClient(name);
		await old.connect();
		await old.query(`CREATE TABLE old_things (x int); CREATE FUNCTION old_guard() RETURNS trigger LANGUAGE plpgsql AS $$ BEGIN RETURN NULL; END $$;
			CREATE TRIGGER old_no_delete BEFORE DELETE ON old_things FOR EACH ROW EXECUTE FUNCTION old_guard(); INSERT INTO old_things VALUES (1)`);
		await old.end();
		expect(await ownerOf(name, 'old_things')).toBe(APP);

		await ensureDatabase({ port: PORT, password: process.env.REGOLOG_PG_ADMIN_PASSWORD, dbName: name, user: APP, userPassword: APP_PASSWORD });
		expect(await ownerOf(name, 'old_things')).toBe(OWNER_ROLE);
		expect(await asSuperuser(name, async (c) => (await c.query(`SELECT pg_get_userbyid(datdba) AS o FROM pg_database WHERE datname = $1`, [name])).rows[0].o)).toBe(OWNER_ROLE);

		const s = new Sequelize(name, APP, APP_PASSWORD, { host: '127.0.0.1', port: PORT, dialect: 'postgres', dialectModule: pg, logging: false });
		try {
			await migrateUp(s);
			// the app reads and writes the old table, but its trigger is no longer the app's to switch off
			await s.query('INSERT INTO old_things VALUES (2)');
			expect((await s.query('SELECT count(*)::int AS n FROM old_things'))[0]).toEqual([{ n: 2 }]);
			await expect(s.query('ALTER TABLE old_things DISABLE TRIGGER old_no_delete')).rejects.toThrow(/must be owner of table old_things/);
			await expect(s.query('DROP FUNCTION old_guard() CASCADE')).rejects.toThrow(/must be owner of function old_guard/);
			await expect(s.query('CREATE TABLE sneaky (x int)')).rejects.toThrow(/permission denied for schema public/);
			// and a second hand-over changes nothing
			await ensureDatabase({ port: PORT, password: process.env.REGOLOG_PG_ADMIN_PASSWORD, dbName: name, user: APP, userPassword: APP_PASSWORD });
			expect(await ownerOf(name, 'trail_events')).toBe(OWNER_ROLE);
		} finally {
			await s.close();
		}
	});

	it('lets the app reach a table a later migration makes, without a grant of its own, and never the trail', async () => {
		const s = await scratchDatabase('roles_later');
		try {
			await migrateUp(s.sequelize);
			// as a later migration would: made by the owner, with no GRANT
			await asOwner(s.name, (c) => c.query('CREATE TABLE later_things (id serial PRIMARY KEY, note text)'));
			await s.sequelize.query(`INSERT INTO later_things (note) VALUES ('reachable at once')`);
			await s.sequelize.query(`UPDATE later_things SET note = 'and writable'`);
			await expect(s.sequelize.query('TRUNCATE later_things')).rejects.toThrow(/permission denied for table later_things/);
			await expect(s.sequelize.query('ALTER TABLE later_things ADD COLUMN y int')).rejects.toThrow(/must be owner of table later_things/);
			// the grant step after the next batch is idempotent and keeps the trail narrowed
			const owner = ownerConnection(s.sequelize);
			try {
				await grantAppPrivileges(owner, APP);
				await grantAppPrivileges(owner, APP);
			} finally {
				await owner.close();
			}
			expect((await s.sequelize.query('SELECT note FROM later_things'))[0]).toEqual([{ note: 'and writable' }]);
			await expect(s.sequelize.query(`UPDATE trail_events SET actor_label = 'x'`)).rejects.toThrow(/permission denied for table trail_events/);
			await expect(s.sequelize.query(`DELETE FROM trail_checkpoints`)).rejects.toThrow(/permission denied for table trail_checkpoints/);
			const rights = await asSuperuser(s.name, async (c) =>
				(await c.query(`SELECT privilege_type FROM information_schema.role_table_grants WHERE grantee = $1 AND table_name = 'trail_events' ORDER BY 1`, [APP])).rows.map((r) => r.privilege_type)
			);
			expect(rights).toEqual(['SELECT']);
		} finally {
			await s.drop();
		}
	});
});
