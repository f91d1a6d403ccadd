import { describe, it, expect, afterAll } from 'vitest';
import { existsSync, writeFileSync, rmSync, mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname } from 'node:path';
import { join } from 'node:path';
import pg from 'pg';
import { startCluster, stopCluster, portOpen, clusterDir, superuserPassword } from '../../scripts/lib/pg.mjs';

const root = mkdtempSync(join(process.cwd(), '.regolog', 'scratch-cluster-'));
const port = Number(process.env.REGOLOG_TEST_PORT_SCRATCH_DB ?? 24323);
const quiet = () => {};

async function query(password: string, sql: string) {
	const c = new pg.Client({ host: '127.0.0.1', port, user: 'postgres', password, database: 'postgres' });
	await c.connect();
	try {
		return (await c.query(sql)).rows;
	} finally {
		await c.end();
	}
}

afterAll(() => {
	stopCluster({ root, log: quiet });
	rmSync(dirname(clusterDir(root, quiet)), { recursive: true, force: true });
	rmSync(root, { recursive: true, force: true });
});

describe('PostgreSQL lifecycle scripts', () => {
	it('starting twice reuses one cluster and keeps its data', async () => {
		const first = await startCluster({ root, port, log: quiet });
		expect(first.reused).toBe(false);
		await query(first.password, 'CREATE TABLE kept (v int); INSERT INTO kept VALUES (42)');
		const second = await startCluster({ root, port, log: quiet });
		expect(second.reused).toBe(true);
		expect(second.dir).toBe(first.dir);
		// mkdtemp makes a folder only its owner may enter, as below a private home: the
		// cluster then lives under the temporary space instead.
		expect(first.dir.startsWith(tmpdir())).toBe(true);
		expect(first.dir).toBe(clusterDir(root, quiet));
		expect(await query(second.password, 'SELECT v FROM kept')).toEqual([{ v: 42 }]);
	});

	it('stopping frees the port, and a restart finds the same data', async () => {
		expect(stopCluster({ root, log: quiet })).toBe(true);
		expect(await portOpen(port)).toBe(false);
		const again = await startCluster({ root, port, log: quiet });
		expect(again.reused).toBe(false);
		expect(await query(again.password, 'SELECT v FROM kept')).toEqual([{ v: 42 }]);
	});

	it('recovers from a stale pid file left by a crashed server', async () => {
		stopCluster({ root, log: quiet });
		const dir = clusterDir(root, quiet);
		const pidFile = join(dir, 'postmaster.pid');
		// A pid file naming a process that does not exist, as after a crash.
		writeFileSync(pidFile, `999999\n${dir}\n0\n${port}\n`);
		const messages: string[] = [];
		const r = await startCluster({ root, port, log: (m: string) => messages.push(m) });
		expect(messages.some((m) => m.includes('stale'))).toBe(true);
		expect(existsSync(pidFile)).toBe(true);
		expect(await query(r.password, 'SELECT v FROM kept')).toEqual([{ v: 42 }]);
		expect(superuserPassword(dir)).toBe(r.password);
	});
});
