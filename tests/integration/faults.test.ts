import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { mkdtempSync, rmSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import pg from 'pg';
import { Sequelize } from 'sequelize';
import { startCluster, stopCluster, ensureDatabase, clusterDir, portOpen } from '../../scripts/lib/pg.mjs';
import { readMailbox } from '../../fakes/mailbox.mjs';
import { verifyTrail } from '../../src/lib/server/trail';
import { startApp, stopApp, httpAt, type AppProcess, type Answer } from '../../scripts/lib/app-process';
import { DEMO } from '../helpers/http';

/**
 * Faults, each against an app process, a PostgreSQL cluster and fakes of this file's own, on
 * scratch ports: the app killed with SIGKILL in the middle of a burst of splits, PostgreSQL
 * restarted under load, and the storage and mail services stopped.
 */
const apiPort = Number(process.env.REGOLOG_API_TEST_PORT ?? 24325);
// clear of the profile's own ports and of the benchmark cluster (port base + 7)
const APP_PORT = apiPort + 5;
const DB_PORT = apiPort + 6;
const S3_PORT = apiPort + 7;
const SMTP_PORT = apiPort + 8;
const DB_NAME = 'regolog_faults';
const BURST = Number(process.env.REGOLOG_FAULT_SPLITS ?? 600);
const PARENTS = 30;
const quiet = () => {};

const root = mkdtempSync(join(process.cwd(), '.regolog', 'faults-'));
const s3Dir = join(root, 's3');
const mailDir = join(root, 'mail');
let env: Record<string, string>;
let app: AppProcess | null = null;
let sequelize: Sequelize;
let pgPassword = '';

// The fakes run as processes of their own, so stopping one really closes every socket to it.
const fakes: Record<'s3' | 'smtp', ChildProcess | null> = { s3: null, smtp: null };
async function startFake(which: 's3' | 'smtp') {
	const [port, args] = which === 's3'
		? [S3_PORT, ['fakes/s3.mjs', '--port', String(S3_PORT), '--dir', s3Dir, '--bucket', 'regolog-documents']]
		: [SMTP_PORT, ['fakes/smtp.mjs', '--port', String(SMTP_PORT), '--dir', mailDir]];
	const child = spawn(process.execPath, args as string[], { stdio: ['ignore', 'ignore', 'pipe'] });
	fakes[which] = child;
	let stderr = '';
	child.stderr!.on('data', (d) => (stderr += d));
	// a machine busy with the other test files can take several seconds to start node
	for (let i = 0; i < 600 && child.exitCode === null && !(await portOpen(port)); i++) await wait(50);
	if (!(await portOpen(port))) throw new Error(`the ${which} fake did not open port ${port}${child.exitCode !== null ? ` (it exited with ${child.exitCode}: ${stderr.trim().slice(0, 500)})` : ''}`);
}
async function stopFake(which: 's3' | 'smtp') {
	const c = fakes[which];
	fakes[which] = null;
	if (!c || c.exitCode !== null) return;
	const gone = new Promise((r) => c.once('exit', r));
	c.kill('SIGKILL');
	await gone;
}

async function sql<T = any>(text: string, values: unknown[] = []): Promise<T[]> {
	const c = new pg.Client({ host: '127.0.0.1', port: DB_PORT, user: 'postgres', password: pgPassword, database: DB_NAME });
	await c.connect();
	try {
		return (await c.query(text, values)).rows as T[];
	} finally {
		await c.end();
	}
}

function wait(ms: number) {
	return new Promise((r) => setTimeout(r, ms));
}

function expectErrorShape(a: Answer, what: string) {
	expect(a.type, `${what}: ${a.text.slice(0, 200)}`).toContain('application/json');
	expect(typeof a.body?.error?.code, what).toBe('string');
	expect(typeof a.body?.error?.message, what).toBe('string');
	expect(a.text, `${what} leaks a stack`).not.toMatch(/\n\s+at |node_modules/);
}

beforeAll(async () => {
	const cluster = await startCluster({ root, port: DB_PORT, log: quiet });
	pgPassword = cluster.password;
	await ensureDatabase({ port: DB_PORT, password: pgPassword, dbName: DB_NAME, user: 'regolog', userPassword: 'regolog-local', fresh: true });
	await startFake('s3');
	await startFake('smtp');
	env = {
		REGOLOG_DB_HOST: '127.0.0.1',
		REGOLOG_DB_PORT: String(DB_PORT),
		REGOLOG_DB_NAME: DB_NAME,
		REGOLOG_DB_USER: 'regolog',
		REGOLOG_DB_PASSWORD: 'regolog-local',
		REGOLOG_S3_ENDPOINT: `http://127.0.0.1:${S3_PORT}`,
		REGOLOG_S3_BUCKET: 'regolog-documents',
		REGOLOG_SMTP_HOST: '127.0.0.1',
		REGOLOG_SMTP_PORT: String(SMTP_PORT),
		REGOLOG_MAIL_DIR: mailDir
	};
	const setup = spawnSync(process.execPath, ['--import', 'tsx', 'scripts/setup-db.ts'], { env: { ...process.env, ...env }, encoding: 'utf8' });
	if (setup.status !== 0) throw new Error(`migrating the fault database failed:\n${setup.stdout}${setup.stderr}`);
	sequelize = new Sequelize(DB_NAME, 'regolog', 'regolog-local', { host: '127.0.0.1', port: DB_PORT, dialect: 'postgres', dialectModule: pg, logging: false });
	app = await startApp(APP_PORT, env);
}, 120_000);

afterAll(async () => {
	await stopApp(app, 'SIGKILL');
	await sequelize?.close();
	await stopFake('s3');
	await stopFake('smtp');
	stopCluster({ root, log: quiet });
	rmSync(dirname(clusterDir(root, quiet)), { recursive: true, force: true });
	rmSync(root, { recursive: true, force: true });
}, 60_000);

describe('the app killed with SIGKILL during a burst of splits', () => {
	it('keeps every acknowledged split, leaves no partial one, and the budgets and trail reconcile', async () => {
		const curator = httpAt(app!.base);
		await curator.signIn(DEMO.curator);
		const parents: string[] = [];
		for (let i = 0; i < PARENTS; i++) {
			const r = await curator.post('/api/items', { collection: 'HLF', massUg: 50_000_000, description: `fault burst parent ${i}` });
			expect(r.status).toBe(201);
			parents.push(r.body.item.code);
		}

		const acknowledged: { splitId: string; parent: string; children: string[] }[] = [];
		const statuses = new Map<string, number>();
		let killed = false;
		const killAfter = Math.floor(BURST / 4);
		const burst = Array.from({ length: BURST }, async (_, k) => {
			const parent = parents[k % PARENTS];
			try {
				const r = await curator.post(`/api/items/${parent}/splits`, { children: [{ massUg: 1000 + (k % 7) }, { massUg: 2000 }] });
				statuses.set(String(r.status), (statuses.get(String(r.status)) ?? 0) + 1);
				if (r.status === 201) {
					acknowledged.push({ splitId: r.body.splitId, parent, children: r.body.children.map((c: { code: string }) => c.code) });
					if (!killed && acknowledged.length >= killAfter) {
						killed = true;
						app!.child.kill('SIGKILL');
					}
				} else if (!killed) {
					expectErrorShape(r, `split ${k}`);
				}
			} catch {
				statuses.set('connection cut', (statuses.get('connection cut') ?? 0) + 1);
			}
		});
		await Promise.all(burst);
		await app!.exited;
		console.log(`[faults] burst of ${BURST} splits on ${PARENTS} parents: ${acknowledged.length} acknowledged before and while the kill; answers ${JSON.stringify(Object.fromEntries(statuses))}`);
		expect(killed).toBe(true);
		// the kill came before the end of the burst: some requests never got an answer
		expect(acknowledged.length).toBeLessThan(BURST);

		app = await startApp(APP_PORT, env);

		const ids = acknowledged.map((a) => a.splitId);
		const found = await sql<{ id: string }>('SELECT id FROM splits WHERE id = ANY($1::uuid[])', [ids]);
		expect(found.length, 'acknowledged splits present').toBe(ids.length);
		const childCodes = acknowledged.flatMap((a) => a.children);
		const kids = await sql<{ code: string }>('SELECT code FROM items WHERE code = ANY($1::text[])', [childCodes]);
		expect(kids.length, 'children of acknowledged splits present').toBe(childCodes.length);

		// every split: its children, its ledger and its parent agree to the microgram
		const partial = await sql(`
			SELECT s.id FROM splits s
			CROSS JOIN LATERAL (SELECT count(*) AS n, coalesce(sum(initial_mass_ug), 0) AS total FROM items WHERE split_id = s.id) ch
			CROSS JOIN LATERAL (
				SELECT coalesce(sum(delta_ug) FILTER (WHERE item_id = s.parent_id), 0) AS parent_delta,
				       coalesce(sum(delta_ug) FILTER (WHERE item_id <> s.parent_id), 0) AS children_delta,
				       count(*) FILTER (WHERE item_id <> s.parent_id) AS children_entries
				FROM ledger_entries WHERE split_id = s.id) l
			WHERE ch.n = 0 OR ch.total <> s.children_total_ug OR l.children_delta <> s.children_total_ug
			   OR l.children_entries <> ch.n OR l.parent_delta <> -(s.children_total_ug + s.loss_ug)`);
		expect(partial, 'splits whose parts do not reconcile').toEqual([]);
		const orphans = await sql(`SELECT code FROM items WHERE kind = 'aliquot' AND (split_id IS NULL OR NOT EXISTS (SELECT 1 FROM ledger_entries e WHERE e.item_id = items.id))`);
		expect(orphans, 'aliquots outside a split').toEqual([]);

		// every item's mass is its ledger's sum and last balance; every parent's budget closes
		const ledgerOff = await sql(`
			SELECT i.code FROM items i
			LEFT JOIN LATERAL (SELECT coalesce(sum(delta_ug), 0) AS d FROM ledger_entries WHERE item_id = i.id) s ON true
			LEFT JOIN LATERAL (SELECT balance_after_ug FROM ledger_entries WHERE item_id = i.id ORDER BY seq DESC LIMIT 1) last ON true
			WHERE s.d <> i.mass_ug OR last.balance_after_ug IS DISTINCT FROM i.mass_ug`);
		expect(ledgerOff, 'items whose mass differs from their ledger').toEqual([]);
		const budgetOff = await sql(`
			SELECT p.code FROM items p
			JOIN LATERAL (SELECT coalesce(sum(children_total_ug + loss_ug), 0) AS spent FROM splits WHERE parent_id = p.id) s ON true
			WHERE p.code = ANY($1::text[]) AND p.initial_mass_ug <> p.mass_ug + s.spent`, [parents]);
		expect(budgetOff, 'parents whose budget does not close').toEqual([]);
		const [{ splits, events }] = await sql(`SELECT (SELECT count(*)::int FROM splits) AS splits, (SELECT count(*)::int FROM trail_events WHERE action = 'item.split') AS events`);
		expect(events).toBe(splits);

		const trail = await verifyTrail(sequelize);
		expect(trail.ok, JSON.stringify(trail)).toBe(true);
		console.log(`[faults] after restart: ${splits} splits recorded (${ids.length} acknowledged), ${trail.events} trail events verified`);

		// the restarted app splits again
		const again = await curator.post(`/api/items/${parents[0]}/splits`, { children: [{ massUg: 500 }] });
		expect(again.status).toBe(201);
	}, 180_000);
});

describe('PostgreSQL restarted under load', () => {
	it('answers 503 with the error shape meanwhile, never a 500, and recovers by itself', async () => {
		const curator = httpAt(app!.base);
		await curator.signIn(DEMO.curator);
		const parent = (await curator.post('/api/items', { collection: 'HLF', massUg: 10_000_000, description: 'restart load parent' })).body.item.code;
		const counts: Record<string, number> = {};
		const bad: string[] = [];
		let stop = false;
		let recovered = false;
		let downSeen = false;
		const worker = async (n: number) => {
			while (!stop) {
				const kind = n % 3;
				let r: Answer;
				try {
					r = kind === 0 ? await curator.get('/api/items?limit=5') : kind === 1 ? await curator.post(`/api/items/${parent}/splits`, { children: [{ massUg: 100 }] }) : await curator.request('GET', '/items');
				} catch (e) {
					counts['connection error'] = (counts['connection error'] ?? 0) + 1;
					bad.push(`connection error ${(e as Error).message}`);
					continue;
				}
				counts[r.status] = (counts[r.status] ?? 0) + 1;
				if (r.status === 503) {
					downSeen = true;
					// the API answers with the error shape; a page with the error page, never a stack
					if (kind === 2 && !r.type.includes('json')) expect(r.text, 'page during the restart').not.toMatch(/\n\s+at |node_modules/);
					else expectErrorShape(r, `${kind} during the restart`);
				} else if (r.status >= 500) bad.push(`${r.status} ${r.text.slice(0, 300)}`);
				else if (downSeen && r.status < 300) recovered = true;
				if (r.status === 503) await wait(50);
			}
		};
		const workers = Array.from({ length: 9 }, (_, n) => worker(n));
		await wait(1500);
		expect(stopCluster({ root, log: quiet })).toBe(true);
		for (let i = 0; i < 100 && !downSeen; i++) await wait(100);
		await wait(1500);
		await startCluster({ root, port: DB_PORT, log: quiet });
		for (let i = 0; i < 300 && !recovered; i++) await wait(100);
		await wait(500);
		stop = true;
		await Promise.all(workers);
		console.log(`[faults] PostgreSQL restart under load: answers ${JSON.stringify(counts)}`);
		expect(bad).toEqual([]);
		expect(downSeen).toBe(true);
		expect(recovered).toBe(true);
		expect((await curator.get('/api/health')).status).toBe(200);
		expect(app!.child.exitCode).toBe(null);
		const trail = await verifyTrail(sequelize);
		expect(trail.ok, JSON.stringify(trail)).toBe(true);
	}, 120_000);
});

describe('storage and mail fakes down', () => {
	it('health names the failing parts, and mail queued meanwhile is delivered once mail is back', async () => {
		const admin = httpAt(app!.base);
		await admin.signIn(DEMO.admin);
		await stopFake('s3');
		await stopFake('smtp');
		const h = await admin.get('/api/health');
		expect(h.status).toBe(503);
		expect(h.body.db).toBe('ok');
		expect(h.body.storage).toMatch(/^unavailable/);
		expect(h.body.mail).toMatch(/^unavailable/);
		expect(h.body.error.message).toMatch(/storage.*mail|mail.*storage/);

		const email = `outage-${Date.now()}@fennick.example`;
		const inv = await admin.post('/api/users', { email, name: 'Outage Invitee', role: 'auditor' });
		expect(inv.status).toBe(201);
		// the sender tries (the oldest waiting message first), fails, and keeps everything queued
		let failed: { n: number } | undefined;
		for (let i = 0; i < 150; i++) {
			[failed] = await sql(`SELECT count(*)::int AS n FROM mail_outbox WHERE status = 'queued' AND attempts > 0 AND last_error IS NOT NULL`);
			if (failed && failed.n > 0) break;
			await wait(100);
		}
		expect(failed?.n).toBeGreaterThan(0);
		const [row] = await sql('SELECT status FROM mail_outbox WHERE to_address = $1', [email]);
		expect(row?.status).toBe('queued');

		await startFake('s3');
		await startFake('smtp');
		let delivered = false;
		for (let i = 0; i < 300 && !delivered; i++) {
			delivered = (await readMailbox(mailDir)).some((m) => m.to.includes(email));
			if (!delivered) await wait(100);
		}
		expect(delivered).toBe(true);
		const [after] = await sql('SELECT status FROM mail_outbox WHERE to_address = $1', [email]);
		expect(after.status).toBe('sent');
		expect((await admin.get('/api/health')).status).toBe(200);
	}, 90_000);
});
