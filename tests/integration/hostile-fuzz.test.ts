import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import fc from 'fast-check';
import { walkRoutes } from '../helpers/routes';
import { signedIn, DEMO, BASE, type Client } from '../helpers/http';
import { asSuperuser, snapshot } from '../helpers/scratch-db';
import { Sequelize } from 'sequelize';
import pg from 'pg';

/**
 * Every JSON route found under src/routes/api, fuzzed with arbitrary bodies, query strings and
 * path parameters, as a curator and as a lab member: the answer is never a server error, and
 * every refusal has the documented shape { "error": { "code", "message" } } with no stack in it.
 * Routes added later are found by walking the tree, so they are fuzzed without a change here.
 */
const RUNS = Number(process.env.REGOLOG_FUZZ_RUNS ?? 20);

const HOSTILE_SEGMENTS = [
	'../../etc/passwd',
	'..%2F..%2Fetc%2Fpasswd',
	'..\\..\\windows\\win.ini',
	'%00',
	'\u0000',
	'a\u0000b',
	"' OR '1'='1",
	"'; DROP TABLE items; --",
	'1 UNION SELECT password_hash FROM users',
	'TRN-00001/Y',
	'TRN-00001-Y',
	'TRN-00001%2FY',
	'TRN-00001/Y/../../../etc/passwd',
	'00000000-0000-4000-8000-000000000000',
	'-1',
	'99999999999999999999999',
	'NaN',
	'%E0%A4%A',
	'\uD800',
	'😀'.repeat(50),
	'<script>alert(1)</script>',
	'${7*7}',
	'x'.repeat(3000)
];

// Names that every plain object already inherits: a route must treat them as the input's own words.
const PROTO_KEYS = ['__proto__', 'constructor', 'valueOf', 'toString', 'hasOwnProperty', 'isPrototypeOf'];

const QUERY_KEYS = [...PROTO_KEYS, 'q', 'collection', 'state', 'holder', 'kind', 'sort', 'dir', 'after', 'limit', 'depth', 'format', 'offsetX', 'offsetY', 'role', 'lab', 'active', 'from', 'to'];

const hostileString = fc.oneof(
	fc.constantFrom(...HOSTILE_SEGMENTS),
	fc.string({ maxLength: 40 }),
	fc.string({ unit: 'grapheme', maxLength: 20 }),
	fc.string({ minLength: 1000, maxLength: 2500 })
);

const pathParam = fc.oneof(fc.constantFrom(...HOSTILE_SEGMENTS), fc.string({ minLength: 1, maxLength: 60 }), fc.uuid());

const queryString = fc
	.array(fc.tuple(fc.oneof(fc.constantFrom(...QUERY_KEYS), fc.string({ maxLength: 12 })), hostileString), { maxLength: 4 })
	.map((pairs) => {
		const p = new URLSearchParams();
		for (const [k, v] of pairs) p.append(k, v);
		const s = p.toString();
		return s ? `?${s}` : '';
	});

// Known field names of the JSON bodies mixed with arbitrary ones, so validation is reached beyond its first check.
const BODY_KEYS = [...PROTO_KEYS, 'children', 'massUg', 'collection', 'description', 'name', 'codes', 'format', 'balanceId', 'parentAfterUg', 'reason', 'role', 'labId', 'active', 'readabilityUg', 'repeatabilityUg', 'calibrationDue', 'reserveFraction', 'items', 'requestId', 'meaning'];
const anyBody = fc.oneof(
	fc.jsonValue({ maxDepth: 3 }),
	fc.dictionary(fc.constantFrom(...BODY_KEYS), fc.oneof(fc.jsonValue({ maxDepth: 2 }), hostileString, fc.integer(), fc.double()), { maxKeys: 5 }),
	fc.constant({ children: [{ massUg: -1 }] }),
	fc.constant({ children: [{ massUg: 1e308 }] })
);
const rawBody = fc.oneof(
	anyBody.map((b) => ({ text: JSON.stringify(b), type: 'application/json' })),
	fc.string({ maxLength: 200 }).map((t) => ({ text: t, type: 'application/json' })),
	fc.string({ maxLength: 200 }).map((t) => ({ text: t, type: 'text/plain' })),
	fc.constant({ text: '{"a":', type: 'application/json' }),
	fc.constant({ text: 'email=x&password=y', type: 'application/x-www-form-urlencoded' })
);

/** Percent-encodes a path segment; a lone surrogate goes out as bytes that are not UTF-8 (%ED%A0%80). */
function segment(v: string): string {
	return encodeURIComponent(v.replace(/\uFFFD/g, '?').toWellFormed()).replace(/%EF%BF%BD/g, '%ED%A0%80');
}

function fillPath(id: string, values: string[]): string {
	let i = 0;
	return id.replace(/\[[^\]]+\]/g, () => segment(values[i++ % values.length]));
}

/** Requests that must not be fuzzed with a live session because they end it or throttle the address. */
function sessionSafe(routeId: string, body: unknown): boolean {
	if (routeId === '/api/auth/sign-in' && body && typeof body === 'object' && 'email' in body && 'password' in body) return false;
	return true;
}

function checkAnswer(what: string, status: number, text: string, type: string) {
	expect(status, `${what} → ${status} ${text.slice(0, 300)}`).toBeLessThan(500);
	if (status >= 400) {
		expect(type, `${what} content type`).toContain('application/json');
		const body = JSON.parse(text);
		expect(typeof body?.error?.code, `${what} error code in ${text.slice(0, 200)}`).toBe('string');
		expect(typeof body?.error?.message, `${what} error message`).toBe('string');
		expect(text, `${what} leaks a stack`).not.toMatch(/\n\s+at |node_modules|Sequelize\w*Error|syntax error at or near/);
	}
}

async function send(c: Client, method: string, path: string, body?: { text: string; type: string }) {
	const headers: Record<string, string> = { origin: BASE };
	if (c.cookie) headers.cookie = c.cookie;
	if (body) headers['content-type'] = body.type;
	const res = await fetch(BASE + path, { method, headers, body: body && method !== 'GET' ? body.text : undefined, redirect: 'manual' });
	return { status: res.status, text: await res.text(), type: res.headers.get('content-type') ?? '' };
}

const routes = walkRoutes().filter((r) => r.id.startsWith('/api/'));
const roles = { curator: DEMO.curator, lab: DEMO.fennick } as const;
const clients = {} as Record<keyof typeof roles, Client>;
let sequelize: Sequelize;
let before: Awaited<ReturnType<typeof snapshot>>;
let requests = 0;

// Tables that bad input may touch without changing anything a user sees: sessions are refreshed,
// failed sign-ins are counted. Everything else must stay exactly as it was.
const VOLATILE = ['schema_migrations', 'sessions', 'sign_in_failures'];

beforeAll(async () => {
	for (const [k, email] of Object.entries(roles)) clients[k as keyof typeof roles] = await signedIn(email);
	sequelize = new Sequelize(process.env.REGOLOG_DB_NAME!, process.env.REGOLOG_DB_USER!, process.env.REGOLOG_DB_PASSWORD!, {
		host: process.env.REGOLOG_DB_HOST, port: Number(process.env.REGOLOG_DB_PORT), dialect: 'postgres', dialectModule: pg, logging: false
	});
});
afterAll(async () => {
	console.log(`[fuzz] ${requests} hostile requests over ${routes.length} API routes (${RUNS} runs per route, method and role)`);
	await sequelize?.close();
});

describe('hostile input on every JSON route', () => {
	it('finds the API routes by walking src/routes', () => {
		expect(routes.map((r) => r.id)).toContain('/api/items/[code]/splits');
		expect(routes.length).toBeGreaterThan(10);
	});

	it('records the database before the fuzzing', async () => {
		before = await snapshot(sequelize, VOLATILE);
		expect(Object.keys(before)).toContain('items');
	});

	for (const route of routes) {
		for (const method of route.methods) {
			for (const role of Object.keys(roles) as (keyof typeof roles)[]) {
				it(`${method} ${route.id} as ${role}`, async () => {
					await fc.assert(
						fc.asyncProperty(fc.array(pathParam, { minLength: 1, maxLength: 3 }), queryString, rawBody, async (params, query, body) => {
							let parsed: unknown;
							try {
								parsed = JSON.parse(body.text);
							} catch {
								parsed = undefined;
							}
							if (!sessionSafe(route.id, parsed)) return;
							// A refused request must not end the session; one that ends it (sign-out) gets a new one.
							const path = fillPath(route.id, params) + query;
							const r = await send(clients[role], method, path, method === 'GET' || method === 'DELETE' ? undefined : body);
							requests++;
							checkAnswer(`${role} ${method} ${path.slice(0, 200)}`, r.status, r.text, r.type);
							if (route.id.endsWith('/sign-out') && r.status === 200) clients[role] = await signedIn(roles[role]);
						}),
						{ numRuns: RUNS }
					);
					if (route.id.endsWith('/sign-out')) clients[role] = await signedIn(roles[role]);
				});
			}
		}
	}

	it('every route takes the names a plain object inherits as unknown input, in the query and in the body', async () => {
		const query = '?' + PROTO_KEYS.map((k) => `${k}=`).join('&');
		const body = { text: `{${PROTO_KEYS.map((k) => `"${k}":"x"`).join(',')}}`, type: 'application/json' };
		for (const route of routes) {
			for (const method of route.methods) {
				const path = fillPath(route.id, ['TRN-00001/Y']) + query;
				const r = await send(clients.curator, method, path, method === 'GET' || method === 'DELETE' ? undefined : body);
				requests++;
				checkAnswer(`curator ${method} ${path}`, r.status, r.text, r.type);
				if (route.id.endsWith('/sign-out') && r.status === 200) clients.curator = await signedIn(roles.curator);
			}
		}
		// ... and as values: of every known query key, of every path parameter, of every body field.
		const asValues = PROTO_KEYS.map((v) => '?' + QUERY_KEYS.filter((k) => !PROTO_KEYS.includes(k)).map((k) => `${k}=${encodeURIComponent(v)}`).join('&'));
		for (const [n, v] of PROTO_KEYS.entries()) {
			const valueBody = { text: JSON.stringify(Object.fromEntries(BODY_KEYS.filter((k) => !PROTO_KEYS.includes(k)).map((k) => [k, v]))), type: 'application/json' };
			for (const route of routes) {
				for (const method of route.methods) {
					const path = fillPath(route.id, [v]) + asValues[n];
					const r = await send(clients.curator, method, path, method === 'GET' || method === 'DELETE' ? undefined : valueBody);
					requests++;
					checkAnswer(`curator ${method} ${path}`, r.status, r.text, r.type);
					if (route.id.endsWith('/sign-out') && r.status === 200) clients.curator = await signedIn(roles.curator);
				}
			}
		}
		// A strict query refuses them by name (this route takes only known keys).
		const items = await send(clients.curator, 'GET', '/api/items?valueOf=1');
		expect(items.status).toBe(400);
		expect(JSON.parse(items.text).error.fields).toEqual({ valueOf: 'is not a known field' });
	});

	it('bad input changed nothing a user can see', async () => {
		const after = await snapshot(sequelize, VOLATILE);
		// the only events added are the sign-ins that replaced sessions ended by the sign-out route
		const signIns = /"action":"user\.signed_(in|out)"/;
		const added = after.trail_events.filter((e) => !before.trail_events.includes(e));
		expect(added.filter((e) => !signIns.test(e))).toEqual([]);
		after.trail_events = after.trail_events.filter((e) => !added.includes(e));
		expect(Object.keys(after).sort()).toEqual(Object.keys(before).sort());
		for (const t of Object.keys(before)) expect(after[t], t).toEqual(before[t]);
	});
});

describe('injection and guessing', () => {
	it('SQL in query parameters and codes is data, never SQL', async () => {
		const c = clients.curator;
		const all = await c.get('/api/items?limit=500');
		expect(all.status).toBe(200);
		const probes = ["' OR '1'='1", "%' OR 1=1 --", "'; DROP TABLE items; --", "\\'; SELECT pg_sleep(5); --", "TRN' UNION SELECT * FROM users --"];
		for (const p of probes) {
			const r = await c.get(`/api/items?q=${encodeURIComponent(p)}`);
			requests++;
			expect([200, 400], p).toContain(r.status);
			if (r.status === 200) expect(r.body.items.length, p).toBe(0);
			const one = await c.get(`/api/items/${encodeURIComponent(p)}`);
			requests++;
			expect([400, 404], p).toContain(one.status);
			expect(one.body.error.code).toEqual(expect.any(String));
			const col = await c.get(`/api/items?collection=${encodeURIComponent(p)}`);
			requests++;
			expect(col.status, p).toBe(400);
		}
		const [{ n }] = await asSuperuser(process.env.REGOLOG_DB_NAME!, async (db) => (await db.query('SELECT count(*)::int AS n FROM items')).rows);
		expect(n).toBeGreaterThanOrEqual(all.body.items.length);
	});

	it('a lab member who guesses codes and ids finds only its own lab’s material', async () => {
		const { codes, fennickLab } = await asSuperuser(process.env.REGOLOG_DB_NAME!, async (db) => {
			const items = (await db.query<{ code: string; holder: string | null }>('SELECT code, holder_lab_id AS holder FROM items ORDER BY code LIMIT 200')).rows;
			const lab = (await db.query<{ lab_id: string }>('SELECT lab_id FROM users WHERE email = $1', [DEMO.fennick])).rows[0].lab_id;
			return { codes: items, fennickLab: lab };
		});
		expect(codes.length).toBeGreaterThan(0);
		let refused = 0;
		for (const { code, holder } of codes) {
			const r = await clients.lab.get(`/api/items/${code}`);
			requests++;
			if (holder === fennickLab) expect(r.status, code).toBe(200);
			else {
				expect(r.status, code).toBe(404);
				refused++;
			}
			const ledger = await clients.lab.get(`/api/items/${code}/ledger`);
			requests++;
			expect(ledger.status, `${code} ledger`).toBe(holder === fennickLab ? 200 : 404);
		}
		expect(refused).toBeGreaterThan(0);
		// the list answers only its own lab's items, whatever holder it asks for
		const list = await clients.lab.get('/api/items?limit=500');
		expect(list.status).toBe(200);
		const other = await clients.curator.get('/api/labs');
		for (const l of other.body.labs as { id: string }[]) {
			const r = await clients.lab.get(`/api/items?holder=${l.id}&limit=500`);
			requests++;
			expect(r.status).toBeLessThan(500);
			if (r.status === 200) for (const it of r.body.items) expect(codes.find((x) => x.code === it.code)?.holder ?? fennickLab).toBe(fennickLab);
		}
	});

	it('another user’s API token cannot be revoked by guessing its id', async () => {
		const made = await clients.curator.post('/api/tokens', { label: 'hostile-input probe' });
		expect(made.status).toBe(201);
		const id = made.body.token?.id ?? made.body.id;
		expect(id).toEqual(expect.any(String));
		const r = await clients.lab.request('DELETE', `/api/tokens/${id}`);
		expect(r.status).toBe(404);
		const mine = await clients.curator.get('/api/tokens');
		expect(JSON.stringify(mine.body)).toContain(id);
		expect((await clients.curator.request('DELETE', `/api/tokens/${id}`)).status).toBeLessThan(300);
	});
});

describe('oversized and slow requests', () => {
	it('an oversized JSON body is refused with 413 and the error shape, with or without a length', async () => {
		const big = JSON.stringify({ collection: 'HLF', massUg: 1000, description: 'x'.repeat(3_000_000) });
		const withLength = await send(clients.curator, 'POST', '/api/items', { text: big, type: 'application/json' });
		expect(withLength.status).toBe(413);
		checkAnswer('oversized body', withLength.status, withLength.text, withLength.type);
		// chunked: the size is not known in advance
		const stream = new ReadableStream({
			start(ctl) {
				for (let i = 0; i < 30; i++) ctl.enqueue(new TextEncoder().encode('x'.repeat(100_000)));
				ctl.close();
			}
		});
		const res = await fetch(`${BASE}/api/items`, {
			method: 'POST', body: stream, duplex: 'half',
			headers: { origin: BASE, cookie: clients.curator.cookie!, 'content-type': 'application/json' }
		} as RequestInit);
		const text = await res.text();
		expect(res.status).toBe(413);
		checkAnswer('oversized chunked body', res.status, text, res.headers.get('content-type') ?? '');
	});

	it('a very long URL is refused with a clear 4xx', async () => {
		const r = await fetch(`${BASE}/api/items?q=${'x'.repeat(40_000)}`, { headers: { cookie: clients.curator.cookie! } });
		expect([413, 414, 431]).toContain(r.status);
	});

	it('a client trickling its headers and body does not hold up others', async () => {
		const net = await import('node:net');
		const url = new URL(BASE);
		const slow = Array.from({ length: 4 }, (_, n) => {
			const s = net.connect({ host: url.hostname, port: Number(url.port) });
			let closed = false;
			s.on('error', () => {});
			s.on('close', () => (closed = true));
			const head = n % 2
				? `POST /api/items HTTP/1.1\r\nHost: ${url.host}\r\nContent-Type: application/json\r\nContent-Length: 100000\r\ncookie: ${clients.curator.cookie}\r\n\r\n{"a":`
				: `GET /api/items HTTP/1.1\r\nHost: ${url.host}\r\nX-Slow: `;
			let i = 0;
			const timer = setInterval(() => {
				if (closed) return clearInterval(timer);
				s.write(i < head.length ? head[i++] : 'x');
			}, 50);
			return { done: () => !closed, stop: () => (clearInterval(timer), s.destroy()) };
		});
		const answers = await Promise.all(Array.from({ length: 24 }, () => clients.curator.get('/api/items?limit=5')));
		// every ordinary request was answered while the slow ones were still sending
		expect(answers.map((a) => a.status)).toEqual(Array(24).fill(200));
		expect(slow.every((s) => s.done())).toBe(true);
		for (const s of slow) s.stop();
	});
});
