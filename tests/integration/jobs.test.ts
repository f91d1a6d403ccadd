import { describe, it, expect, afterAll } from 'vitest';
import { randomBytes } from 'node:crypto';
import type { Transporter } from 'nodemailer';
import { asSuperuser } from '../helpers/scratch-db';
import { closeDb } from '../../src/lib/server/db';
import { models } from '../../src/lib/server/models';
import { runExclusive, JOB_LOCK_CLASS } from '../../src/lib/server/jobs';
import { enqueueMail, deliverDue, outboxMessageId } from '../../src/lib/server/outbox';

const DB = process.env.REGOLOG_DB_NAME ?? 'regolog_test';
const tag = () => randomBytes(4).toString('hex');
const wait = (ms: number) => new Promise((r) => setTimeout(r, ms));

afterAll(async () => {
	await closeDb();
});

/** The backend holding a job's advisory lock, as PostgreSQL shows it in pg_locks. */
async function lockHolder(name: string): Promise<number | null> {
	const r = await asSuperuser(DB, (c) =>
		c.query(
			`SELECT pid FROM pg_locks WHERE locktype = 'advisory' AND granted AND classid = $1::bigint::oid
			   AND objid = ((hashtext($2)::bigint + 4294967296) % 4294967296)::oid AND objsubid = 2`,
			[JOB_LOCK_CLASS, name]
		)
	);
	return r.rows[0]?.pid ?? null;
}

/** Queues messages held a year ahead, so that only this test's own senders (`onlyIds`) touch them. */
async function queue(n: number, label: string): Promise<number[]> {
	const sq = models();
	return sq.transaction(async (t) => {
		const ids: number[] = [];
		for (let i = 0; i < n; i++) {
			ids.push(await enqueueMail(t, { to: `jobs-${label}-${i}@brightwater.example`, subject: `${label} ${i}`, text: 'test of the sender', kind: 'test' }, { notBefore: new Date(Date.now() + 365 * 86400_000) }));
		}
		return ids;
	});
}

/** A transport that records what it was asked to send, taking a few milliseconds per message like a relay. */
function recordingTransport(sent: string[], before?: () => Promise<void>): Transporter {
	return {
		sendMail: async (m: { messageId?: string }) => {
			if (before) await before();
			await wait(4);
			sent.push(m.messageId!);
			return { messageId: m.messageId };
		}
	} as unknown as Transporter;
}

describe('the exclusive job runner', () => {
	it('runs a job on one caller at a time: a second caller is told the job is busy and does not wait', async () => {
		const name = `test-busy-${tag()}`;
		let release!: () => void;
		const gate = new Promise<void>((r) => (release = r));
		let runs = 0;
		const first = runExclusive(name, async () => {
			runs++;
			await gate;
			return 'first';
		});
		// the first run holds the lock once its transaction has asked for it
		for (let i = 0; i < 100 && (await lockHolder(name)) === null; i++) await wait(20);
		expect(await lockHolder(name)).not.toBeNull();
		const second = await runExclusive(name, async () => {
			runs++;
			return 'second';
		});
		expect(second).toEqual({ ran: false, reason: 'busy' });
		release();
		expect(await first).toEqual({ ran: true, value: 'first' });
		expect(runs).toBe(1);
		// with the first run over, the lock is free again
		expect(await lockHolder(name)).toBeNull();
		expect(await runExclusive(name, async () => 'third')).toEqual({ ran: true, value: 'third' });
	});

	it('frees the job when the holder’s connection dies mid-run, so another instance runs it', async () => {
		const name = `test-dies-${tag()}`;
		let stuck!: () => void;
		const never = new Promise<void>((r) => (stuck = r));
		const dying = runExclusive(name, () => never.then(() => 'late'));
		let pid: number | null = null;
		for (let i = 0; i < 100 && (pid = await lockHolder(name)) === null; i++) await wait(20);
		expect(pid).not.toBeNull();
		expect((await runExclusive(name, async () => 'meanwhile')).ran).toBe(false);
		// what PostgreSQL does when an instance dies: its session ends and the transaction with it
		await asSuperuser(DB, (c) => c.query('SELECT pg_terminate_backend($1)', [pid]));
		for (let i = 0; i < 100 && (await lockHolder(name)) !== null; i++) await wait(20);
		expect(await runExclusive(name, async () => 'taken over')).toEqual({ ran: true, value: 'taken over' });
		stuck();
		await expect(dying).rejects.toThrow();
	});

	it('keeps one schedule for all instances when shared: a run soon after another anywhere is skipped, and a failure is recorded', async () => {
		const name = `test-shared-${tag()}`;
		expect(await runExclusive(name, async () => 1, { everyMs: 3600_000 })).toEqual({ ran: true, value: 1 });
		expect(await runExclusive(name, async () => 2, { everyMs: 3600_000 })).toEqual({ ran: false, reason: 'recent' });
		// a shorter period has passed since: the job runs, fails, and the failure is on record
		await expect(runExclusive(name, async () => { throw new Error('bucket unreachable'); }, { everyMs: 1 })).rejects.toThrow('bucket unreachable');
		const row = (await asSuperuser(DB, (c) => c.query('SELECT runs, last_error, last_instance FROM job_runs WHERE name = $1', [name]))).rows[0];
		expect(row).toMatchObject({ runs: 2, last_error: 'bucket unreachable' });
		expect(row.last_instance).toContain(String(process.pid));
	});
});

describe('the mail sender with several senders', () => {
	it('two senders at once send each queued message exactly once between them', async () => {
		const label = `twice-${tag()}`;
		const ids = await queue(40, label);
		const a: string[] = [];
		const b: string[] = [];
		const [ra, rb] = await Promise.all([
			deliverDue({ transport: recordingTransport(a), onlyIds: ids, limit: 100 }),
			deliverDue({ transport: recordingTransport(b), onlyIds: ids, limit: 100 })
		]);
		expect(ra.sent + rb.sent).toBe(40);
		// both took part, and no message went through both
		expect(a.length).toBeGreaterThan(0);
		expect(b.length).toBeGreaterThan(0);
		expect(a.filter((m) => b.includes(m))).toEqual([]);
		const rows = (await asSuperuser(DB, (c) => c.query(`SELECT id, status, attempts, (extract(epoch FROM created_at) * 1000)::bigint AS ms FROM mail_outbox WHERE id = ANY($1::bigint[]) ORDER BY id`, [ids]))).rows;
		expect(rows.map((r) => [r.status, r.attempts])).toEqual(ids.map(() => ['sent', 1]));
		expect([...a, ...b].sort()).toEqual(rows.map((r) => outboxMessageId(Number(r.id), Number(r.ms))).sort());
	});

	it('a sender that dies before the relay accepts leaves the message queued, and the other sender sends it once', async () => {
		const label = `dies-${tag()}`;
		const [id] = await queue(1, label);
		const dead: string[] = [];
		// the first sender's session ends while it talks to the relay (the instance was killed)
		const dies = recordingTransport(dead, async () => {
			// the sending transaction has marked the row: the old version's xmax names it
			const { pid } = (await asSuperuser(DB, (c) => c.query(`SELECT a.pid FROM mail_outbox m JOIN pg_stat_activity a ON a.backend_xid::text = m.xmax::text WHERE m.id = $1`, [id]))).rows[0];
			await asSuperuser(DB, (c) => c.query('SELECT pg_terminate_backend($1)', [pid]));
			throw new Error('connection lost');
		});
		await expect(deliverDue({ transport: dies, onlyIds: [id] })).rejects.toThrow();
		expect(dead).toEqual([]);
		expect((await asSuperuser(DB, (c) => c.query('SELECT status, attempts, sent_at FROM mail_outbox WHERE id = $1', [id]))).rows[0]).toEqual({ status: 'queued', attempts: 0, sent_at: null });
		const other: string[] = [];
		expect(await deliverDue({ transport: recordingTransport(other), onlyIds: [id] })).toEqual({ sent: 1, failed: 0 });
		expect(other).toHaveLength(1);
		expect((await asSuperuser(DB, (c) => c.query('SELECT status, attempts FROM mail_outbox WHERE id = $1', [id]))).rows[0]).toEqual({ status: 'sent', attempts: 1 });
	});
});
