import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { randomBytes } from 'node:crypto';
import { startApp, stopApp, type AppProcess } from '../../scripts/lib/app-process';
import { asSuperuser } from '../helpers/scratch-db';
import { DEMO, DEMO_PASSWORD } from '../helpers/http';
import { MAIL_DIR } from '../helpers/mail';
import { readMailbox } from '../../fakes/mailbox.mjs';
import { models } from '../../src/lib/server/models';
import { closeDb } from '../../src/lib/server/db';
import { enqueueMail } from '../../src/lib/server/outbox';
import { JOB_LOCK_CLASS, runExclusive } from '../../src/lib/server/jobs';

/**
 * Two app instances, as a facility runs them behind a reverse proxy: the production build twice,
 * on two ports of the test scheme, against the test stack's one database, one bucket and one
 * mail relay (the environment `npm test` gives). The integration tests' own server (port base + 5)
 * keeps running beside them as a third instance.
 */
const apiPort = Number(process.env.REGOLOG_API_TEST_PORT ?? 24325);
// clear of the profile's ports, the fault tests' (api + 5…8) and the benchmark cluster
const PORT_A = apiPort + 20;
const PORT_B = apiPort + 21;
const DB = process.env.REGOLOG_DB_NAME ?? 'regolog_test';
const wait = (ms: number) => new Promise((r) => setTimeout(r, ms));

let a: AppProcess | null = null;
let b: AppProcess | null = null;

/** A JSON client for one instance that carries a session cookie it may share with another client. */
function at(app: AppProcess, session: { cookie: string | null }) {
	return async (method: string, path: string, body?: unknown) => {
		const headers: Record<string, string> = { origin: app.base };
		if (session.cookie) headers.cookie = session.cookie;
		if (body !== undefined) headers['content-type'] = 'application/json';
		const res = await fetch(app.base + path, { method, headers, body: body === undefined ? undefined : JSON.stringify(body), redirect: 'manual' });
		const set = res.headers.get('set-cookie');
		if (set?.startsWith('regolog_session=')) session.cookie = set.split(';')[0];
		const text = await res.text();
		let parsed: any = text;
		try {
			parsed = JSON.parse(text);
		} catch {
			/* not JSON */
		}
		return { status: res.status, body: parsed };
	};
}

async function sql<T = any>(text: string, values: unknown[] = []): Promise<T[]> {
	return (await asSuperuser(DB, (c) => c.query(text, values))).rows as T[];
}

/** Which instance (by its PGAPPNAME) holds the mail sender's job lock just now, if any. */
async function outboxHolder(): Promise<string | null> {
	const rows = await sql<{ application_name: string }>(
		`SELECT a.application_name FROM pg_locks l JOIN pg_stat_activity a ON a.pid = l.pid
		 WHERE l.locktype = 'advisory' AND l.granted AND l.classid = $1::bigint::oid AND l.objsubid = 2
		   AND l.objid = ((hashtext('mail-outbox')::bigint + 4294967296) % 4294967296)::oid`,
		[JOB_LOCK_CLASS]
	);
	return rows[0]?.application_name ?? null;
}

beforeAll(async () => {
	// PGAPPNAME names each instance's connections in pg_stat_activity
	[a, b] = await Promise.all([
		startApp(PORT_A, { REGOLOG_INSTANCE: 'instance-a', PGAPPNAME: 'regolog-instance-a' }),
		startApp(PORT_B, { REGOLOG_INSTANCE: 'instance-b', PGAPPNAME: 'regolog-instance-b' })
	]);
}, 90_000);

afterAll(async () => {
	await stopApp(a, 'SIGKILL');
	await stopApp(b, 'SIGKILL');
	await closeDb();
}, 30_000);

describe('two app instances on one database and one bucket', () => {
	const curator = { cookie: null as string | null };

	it('a session made on one instance is good on the other, and signing out on the other ends it on both', async () => {
		const onA = at(a!, curator);
		const onB = at(b!, curator);
		expect((await onA('POST', '/api/auth/sign-in', { email: DEMO.curator, password: DEMO_PASSWORD })).status).toBe(200);
		expect(curator.cookie).toMatch(/^regolog_session=./);
		const me = await onB('GET', '/api/me');
		expect(me.status).toBe(200);
		expect(me.body.user.email).toBe(DEMO.curator);

		const other = { cookie: null as string | null };
		expect((await at(b!, other)('POST', '/api/auth/sign-in', { email: DEMO.auditor, password: DEMO_PASSWORD })).status).toBe(200);
		const kept = other.cookie;
		expect((await at(a!, other)('GET', '/api/me')).body.user.email).toBe(DEMO.auditor);
		expect((await at(b!, other)('POST', '/api/auth/sign-out', {})).status).toBeLessThan(400);
		const after = await at(a!, { cookie: kept })('GET', '/api/items?limit=1');
		expect(after.status).toBe(401);
	});

	it('concurrent splits of one parent through both instances admit exactly what the budget allows', async () => {
		const onA = at(a!, curator);
		const onB = at(b!, curator);
		const massUg = 23_000;
		const reg = await onA('POST', '/api/items', { collection: 'HLF', massUg, description: 'parent split through two instances' });
		expect(reg.status).toBe(201);
		const parent = reg.body.item.code;
		// instance B computes and keeps the parent's lineage before the splits
		expect((await onB('GET', `/api/items/${parent}/lineage`)).body.descendants).toEqual([]);
		// 60 splits of 1 000 µg and 1 500 µg, alternately through each instance: together far more than the parent holds
		const asks = Array.from({ length: 60 }, (_, k) => ({ via: k % 2 ? 'b' : 'a', massUg: k % 3 ? 1_000 : 1_500 }));
		const answers = await Promise.all(asks.map((q) => (q.via === 'a' ? onA : onB)('POST', `/api/items/${parent}/splits`, { children: [{ massUg: q.massUg }] })));
		const admitted = answers.flatMap((r, k) => (r.status === 201 ? [asks[k]] : []));
		for (const r of answers) expect([201, 409]).toContain(r.status);
		for (const [k, r] of answers.entries()) {
			if (r.status !== 409) continue;
			expect(r.body.error.code).toBe('budget_exceeded');
			// a refused split asked for more than was left when it ran
			expect(r.body.error.availableUg).toBeLessThan(asks[k].massUg);
		}
		expect(new Set(admitted.map((q) => q.via))).toEqual(new Set(['a', 'b']));
		const sum = admitted.reduce((s, q) => s + q.massUg, 0);
		const item = (await onB('GET', `/api/items/${parent}`)).body.item;
		// no overdraw, and nothing left that another split of 1 000 µg could have had
		expect(sum).toBeLessThanOrEqual(massUg);
		expect(item.massUg).toBe(massUg - sum);
		expect(item.massUg).toBeLessThan(1_000);
		expect(item.budget).toMatchObject({ childrenInitialUg: sum, remainingUg: massUg - sum, children: admitted.length, balanced: true });
		// and what B kept is not served stale: the children split through A show there too
		const codes = answers.filter((r) => r.status === 201).map((r) => r.body.children[0].code).sort();
		expect((await onB('GET', `/api/items/${parent}/lineage`)).body.descendants.map((d: { code: string }) => d.code).sort()).toEqual(codes);
	});

	it('one instance killed with SIGKILL mid-burst: no acknowledged split lost, the trail verifies, queued mail goes out once', async () => {
		const onA = at(a!, curator);
		const onB = at(b!, curator);
		const parents: string[] = [];
		for (let i = 0; i < 6; i++) {
			const r = await onA('POST', '/api/items', { collection: 'HLF', massUg: 40_000, description: `parent of the two-instance burst ${i}` });
			expect(r.status).toBe(201);
			parents.push(r.body.item.code);
		}
		// mail queued now, due at once: every instance's sender races for it during the burst. It is
		// queued under the sender's own lock, so that no sender starts on it before instance B is
		// nudged: an invitation sent through B makes B's sender start a round at once, most often
		// ahead of the other instances' timers (who wins is still up to the race)
		const label = `two-instance-${randomBytes(4).toString('hex')}`;
		const MAILS = 150;
		const sq = models();
		let mailIds: number[] = [];
		for (let i = 0; i < 200 && !mailIds.length; i++) {
			const run = await runExclusive('mail-outbox', () =>
				sq.transaction(async (t) => {
					const ids: number[] = [];
					for (let k = 0; k < MAILS; k++) ids.push(await enqueueMail(t, { to: `burst-${k}@brightwater.example`, subject: `${label} ${k}`, text: 'sent once, whichever instance sends it', kind: 'test' }));
					return ids;
				})
			);
			if (run.ran) mailIds = run.value;
			else await wait(50);
		}
		expect(mailIds).toHaveLength(MAILS);
		const admin = { cookie: null as string | null };
		expect((await at(b!, admin)('POST', '/api/auth/sign-in', { email: DEMO.admin, password: DEMO_PASSWORD })).status).toBe(200);
		expect((await at(b!, admin)('POST', '/api/users', { email: `${label}@brightwater.example`, name: 'Invited during the burst', role: 'auditor' })).status).toBe(201);
		let senderBeforeBurst: string | null = null;
		for (let i = 0; i < 100 && senderBeforeBurst === null; i++) {
			senderBeforeBurst = await outboxHolder();
			if (senderBeforeBurst === null) await wait(30);
		}

		const acknowledged: { via: 'a' | 'b'; parent: string; splitId: string; children: string[]; massUg: number }[] = [];
		const lost: number[] = [];
		let killedAfter = -1;
		let senderAtKill: string | null = null;
		const BURST = 240;
		await Promise.all(
			Array.from({ length: BURST }, async (_, k) => {
				const via = k % 2 ? 'b' : 'a';
				const parent = parents[k % parents.length];
				await wait(k * 3);
				try {
					const r = await (via === 'a' ? onA : onB)('POST', `/api/items/${parent}/splits`, { children: [{ massUg: 1_000 }] });
					if (r.status === 201) {
						acknowledged.push({ via, parent, splitId: r.body.splitId, children: r.body.children.map((c: { code: string }) => c.code), massUg: 1_000 });
						if (killedAfter < 0 && acknowledged.filter((x) => x.via === 'b').length >= 30) {
							killedAfter = acknowledged.length;
							senderAtKill = await outboxHolder();
							b!.child.kill('SIGKILL');
						}
					} else expect(r.status, JSON.stringify(r.body)).toBe(409);
				} catch {
					// a request to the killed instance that got no answer
					expect(via).toBe('b');
					lost.push(k);
				}
			})
		);
		await b!.exited;
		expect(killedAfter).toBeGreaterThan(0);
		// instance A kept answering after the kill
		expect(acknowledged.slice(killedAfter).some((x) => x.via === 'a')).toBe(true);

		// every acknowledged split is there with its children, whichever instance answered it
		const ids = acknowledged.map((x) => x.splitId);
		expect((await sql('SELECT id FROM splits WHERE id = ANY($1::uuid[])', [ids])).length).toBe(ids.length);
		const codes = acknowledged.flatMap((x) => x.children);
		expect((await sql('SELECT code FROM items WHERE code = ANY($1::text[])', [codes])).length).toBe(codes.length);
		// each parent: what it gave equals what it lost; never below zero
		for (const p of parents) {
			const item = (await onA('GET', `/api/items/${p}`)).body.item;
			expect(item.massUg).toBeGreaterThanOrEqual(0);
			expect(item.budget.balanced).toBe(true);
			const mine = acknowledged.filter((x) => x.parent === p).length;
			// splits B committed but could not answer before it died count too, never fewer
			expect(item.budget.children).toBeGreaterThanOrEqual(mine);
			expect(item.budget.childrenInitialUg).toBe(item.budget.children * 1_000);
			expect(item.massUg).toBe(40_000 - item.budget.childrenInitialUg);
		}
		const auditor = { cookie: null as string | null };
		expect((await at(a!, auditor)('POST', '/api/auth/sign-in', { email: DEMO.auditor, password: DEMO_PASSWORD })).status).toBe(200);
		const verify = await at(a!, auditor)('GET', '/api/trail/verify');
		expect(verify.body).toMatchObject({ ok: true, firstBrokenAt: null });

		// the queued mail: all sent (by the instances left), each message exactly once
		for (let i = 0; i < 150; i++) {
			const [{ left }] = await sql(`SELECT count(*)::int AS left FROM mail_outbox WHERE id = ANY($1::bigint[]) AND status <> 'sent'`, [mailIds]);
			if (left === 0) break;
			await wait(200);
		}
		expect((await sql(`SELECT status, count(*)::int AS n FROM mail_outbox WHERE id = ANY($1::bigint[]) GROUP BY status`, [mailIds]))).toEqual([{ status: 'sent', n: MAILS }]);
		await wait(500);
		const kept = (await readMailbox(MAIL_DIR)).filter((m) => m.subject.startsWith(`${label} `));
		const bySubject = new Map<string, number>();
		for (const m of kept) bySubject.set(m.subject, (bySubject.get(m.subject) ?? 0) + 1);
		expect([...bySubject.values()].filter((n) => n !== 1)).toEqual([]);
		expect(bySubject.size).toBe(MAILS);
		console.log(
			`[multi-instance] burst of ${BURST} splits: ${acknowledged.length} acknowledged (${acknowledged.filter((x) => x.via === 'b').length} by the killed instance), ${lost.length} cut off by the kill; ` +
				`mail sender before the burst: ${senderBeforeBurst || 'the tests’ own server'}, at the kill: ${senderAtKill === null ? 'none' : senderAtKill || 'the tests’ own server'}; ${MAILS} queued messages each delivered once`
		);
	}, 120_000);
});
