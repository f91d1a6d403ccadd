import { describe, it, expect, afterAll } from 'vitest';
import { spawnSync } from 'node:child_process';
import { QueryTypes } from 'sequelize';
import { migrateUp } from '../../src/lib/server/migrator';
import { scratchDatabase } from '../helpers/scratch-db';

// a migrated database with no account at all, as a production install starts
const scratch = await scratchDatabase('firstadmin');
await migrateUp(scratch.sequelize);
afterAll(() => scratch.drop());

function run(...args: string[]) {
	const r = spawnSync(process.execPath, ['--import', 'tsx', 'scripts/first-admin.ts', ...args], { encoding: 'utf8', env: { ...process.env, REGOLOG_DB_NAME: scratch.name } });
	return { status: r.status, out: r.stdout, err: r.stderr };
}
const one = <T extends object>(sql: string) => scratch.sequelize.query<T>(sql, { type: QueryTypes.SELECT });

describe('npm run admin:first', () => {
	it('refuses bad use, naming the option, and writes nothing', async () => {
		const r = run('--email', 'not an address', '--name', 'Dana Example');
		expect(r.status).toBe(2);
		expect(r.err).toMatch(/--email: /);
		expect(run('--mail', 'x@y.example').status).toBe(2);
		expect(await one('SELECT 1 FROM users')).toEqual([]);
	});

	it('invites the first administrator of an empty database, with the link printed and the mail queued', async () => {
		const r = run('--email', 'dana@facility.example', '--name', 'Dana Example');
		expect(r.err).toBe('');
		expect(r.status).toBe(0);
		const link = /choose the password at (\S+)/.exec(r.out)?.[1];
		expect(link).toMatch(/\/invite\/[A-Za-z0-9_-]{20,}$/);
		const [user] = await one<{ role: string; password_hash: string | null }>(`SELECT role, password_hash FROM users WHERE email = 'dana@facility.example'`);
		expect(user).toEqual({ role: 'admin', password_hash: null });
		const mail = await one<{ body_text: string }>(`SELECT body_text FROM mail_outbox WHERE kind = 'invite' AND to_address = 'dana@facility.example'`);
		expect(mail).toHaveLength(1);
		expect(mail[0].body_text).toContain(link!);
		const [event] = await one<{ actor_label: string; action: string }>(`SELECT actor_label, action FROM trail_events ORDER BY seq DESC LIMIT 1`);
		expect(event).toEqual({ actor_label: 'command line (first administrator)', action: 'user.invited' });
	});

	it('refuses a second first administrator: the first invites the rest', async () => {
		const r = run('--email', 'other@facility.example', '--name', 'Other Example');
		expect(r.status).toBe(1);
		expect(r.err).toMatch(/An administrator exists already/);
		expect(await one(`SELECT 1 FROM users WHERE email = 'other@facility.example'`)).toEqual([]);
	});
});
