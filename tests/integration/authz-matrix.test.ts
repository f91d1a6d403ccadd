import { describe, it, expect, beforeAll } from 'vitest';
import { walkRoutes } from '../helpers/routes';
import { client, signedIn, DEMO, type Client } from '../helpers/http';

/**
 * The authorization matrix: every route × every role, and signed out. Written by hand (not derived
 * from the access table) so that a wrong rule fails. 'ok' means the guard let the request through:
 * any answer but 401, 403 or a server error. Pages answer 303 to the sign-in page when signed out.
 */
type Expect = number | 'ok';
type Who = 'anon' | 'admin' | 'curator' | 'lab' | 'auditor';
interface Case {
	path: string;
	body?: unknown;
	fresh?: boolean; // needs its own session (the request ends it)
	expect: Record<Who, Expect>;
}
const all = (e: Expect, anon: Expect): Record<Who, Expect> => ({ anon, admin: e, curator: e, lab: e, auditor: e });
const only = (roles: Who[], anon: Expect, denied: Expect = 403): Record<Who, Expect> => ({
	anon,
	admin: roles.includes('admin') ? 'ok' : denied,
	curator: roles.includes('curator') ? 'ok' : denied,
	lab: roles.includes('lab') ? 'ok' : denied,
	auditor: roles.includes('auditor') ? 'ok' : denied
});
const SOME_UUID = '00000000-0000-4000-8000-000000000000';
// Cell 1 of the demo seed, held by the facility.
// its code with the slash before the check character percent-encoded, as Regolog's links write it
const FACILITY_ITEM = encodeURIComponent('TRN-00001/Y');

const MATRIX: Record<string, Record<string, Case>> = {
	'/': { GET: { path: '/', expect: all(200, 200) } },
	'/sign-in': {
		GET: { path: '/sign-in', expect: all(303, 200) },
		POST: { path: '/sign-in', body: 'email=x', expect: all('ok', 'ok') }
	},
	'/sign-out': {
		GET: { path: '/sign-out', expect: all(303, 303) },
		POST: { path: '/sign-out', body: '', fresh: true, expect: all(303, 303) }
	},
	'/invite/[token]': {
		GET: { path: '/invite/not-a-real-token', expect: all(410, 410) },
		POST: { path: '/invite/not-a-real-token', body: 'password=x', expect: all('ok', 'ok') }
	},
	'/reset': {
		GET: { path: '/reset', expect: all(200, 200) },
		POST: { path: '/reset', body: 'email=bad', expect: all('ok', 'ok') }
	},
	'/reset/[token]': {
		GET: { path: '/reset/not-a-real-token', expect: all(410, 410) },
		POST: { path: '/reset/not-a-real-token', body: 'password=x', expect: all('ok', 'ok') }
	},
	'/account': {
		GET: { path: '/account', expect: all(200, 303) },
		POST: { path: '/account?/token', body: 'label=', expect: all('ok', 401) }
	},
	'/admin/users': {
		GET: { path: '/admin/users', expect: only(['admin'], 303) },
		POST: { path: '/admin/users?/invite', body: 'email=', expect: only(['admin'], 401) }
	},
	'/admin/labs': {
		GET: { path: '/admin/labs', expect: only(['admin'], 303) },
		POST: { path: '/admin/labs?/create', body: 'name=', expect: only(['admin'], 401) }
	},
	'/api/health': { GET: { path: '/api/health', expect: all(200, 200) } },
	'/api/auth/sign-in': { POST: { path: '/api/auth/sign-in', body: {}, expect: all(422, 422) } },
	'/api/auth/sign-out': { POST: { path: '/api/auth/sign-out', body: {}, fresh: true, expect: all(200, 401) } },
	'/api/me': { GET: { path: '/api/me', expect: all(200, 401) } },
	'/api/tokens': {
		GET: { path: '/api/tokens', expect: all(200, 401) },
		POST: { path: '/api/tokens', body: {}, expect: all(422, 401) }
	},
	'/api/tokens/[id]': { DELETE: { path: `/api/tokens/${SOME_UUID}`, expect: all(404, 401) } },
	'/api/labs': {
		GET: { path: '/api/labs', expect: all(200, 401) },
		POST: { path: '/api/labs', body: {}, expect: only(['admin'], 401) }
	},
	'/api/labs/[id]': { GET: { path: `/api/labs/${SOME_UUID}`, expect: all(404, 401) } },
	'/api/users': {
		GET: { path: '/api/users', expect: only(['admin'], 401) },
		POST: { path: '/api/users', body: {}, expect: only(['admin'], 401) }
	},
	'/api/users/[id]': {
		GET: { path: `/api/users/${SOME_UUID}`, expect: only(['admin'], 401) },
		PATCH: { path: `/api/users/${SOME_UUID}`, body: { name: 'x' }, expect: only(['admin'], 401) }
	},
	// registry
	'/collections': {
		GET: { path: '/collections', expect: only(['admin', 'curator', 'auditor'], 303) },
		POST: { path: '/collections?/rules', body: 'prefix=', expect: only(['admin'], 401) }
	},
	'/items/new': {
		GET: { path: '/items/new', expect: only(['admin', 'curator'], 303) },
		POST: { path: '/items/new', body: 'collection=', expect: only(['admin', 'curator'], 401) }
	},
	'/items/import': { GET: { path: '/items/import', expect: only(['admin', 'curator'], 303) } },
	'/balances': {
		GET: { path: '/balances', expect: only(['admin', 'curator', 'auditor'], 303) },
		POST: { path: '/balances?/create', body: 'name=', expect: only(['admin'], 401) }
	},
	'/api/items/import': { POST: { path: '/api/items/import', body: {}, expect: only(['admin', 'curator'], 401) } },
	'/api/items/import/template': { GET: { path: '/api/items/import/template', expect: only(['admin', 'curator'], 401) } },
	'/items': { GET: { path: '/items', expect: all(200, 303) } },
	'/items/[code]': { GET: { path: `/items/${FACILITY_ITEM}`, expect: { anon: 303, admin: 200, curator: 200, auditor: 200, lab: 404 } } },
	'/items/[code]/split': { GET: { path: `/items/${FACILITY_ITEM}/split`, expect: only(['admin', 'curator'], 303) } },
	'/api/collections': { GET: { path: '/api/collections', expect: only(['admin', 'curator', 'auditor'], 401) } },
	'/api/collections/[prefix]': { PATCH: { path: '/api/collections/TRN', body: {}, expect: only(['admin'], 401) } },
	'/api/balances': {
		GET: { path: '/api/balances', expect: only(['admin', 'curator', 'auditor'], 401) },
		POST: { path: '/api/balances', body: {}, expect: only(['admin'], 401) }
	},
	'/api/balances/[id]': { PATCH: { path: `/api/balances/${SOME_UUID}`, body: {}, expect: only(['admin'], 401) } },
	'/api/items': {
		GET: { path: '/api/items', expect: all(200, 401) },
		POST: { path: '/api/items', body: {}, expect: only(['admin', 'curator'], 401) }
	},
	'/api/items/export': { GET: { path: '/api/items/export', expect: all(200, 401) } },
	'/api/items/[code]': { GET: { path: `/api/items/${FACILITY_ITEM}`, expect: { anon: 401, admin: 200, curator: 200, auditor: 200, lab: 404 } } },
	'/api/items/[code]/lineage': { GET: { path: `/api/items/${FACILITY_ITEM}/lineage`, expect: { anon: 401, admin: 200, curator: 200, auditor: 200, lab: 404 } } },
	'/api/items/[code]/ledger': { GET: { path: `/api/items/${FACILITY_ITEM}/ledger`, expect: { anon: 401, admin: 200, curator: 200, auditor: 200, lab: 404 } } },
	'/api/items/[code]/splits': { POST: { path: `/api/items/${FACILITY_ITEM}/splits`, body: {}, expect: only(['admin', 'curator'], 401) } },
	// labels
	'/scan': { GET: { path: '/scan', expect: all(200, 303) } },
	'/labels': { GET: { path: '/labels', expect: all(200, 303) } },
	'/api/items/[code]/label': { GET: { path: `/api/items/${FACILITY_ITEM}/label`, expect: { anon: 401, admin: 200, curator: 200, auditor: 200, lab: 404 } } },
	'/api/labels': { POST: { path: '/api/labels', body: {}, expect: all(422, 401) } },
	'/api/scan/[code]': { GET: { path: `/api/scan/${FACILITY_ITEM}`, expect: { anon: 401, admin: 200, curator: 200, auditor: 200, lab: 404 } } },
	// documents (the demo report and its documents belong to Fennick: other labs get 404)
	'/reports': { GET: { path: '/reports', expect: all(200, 303) } },
	'/reports/new': { GET: { path: '/reports/new', expect: { anon: 303, admin: 200, curator: 200, lab: 200, auditor: 403 } } },
	'/reports/[id]': { GET: { path: `/reports/${SOME_UUID}`, expect: all(404, 303) } },
	'/api/documents': {
		GET: { path: `/api/documents?subject=item&ref=${FACILITY_ITEM}`, expect: { anon: 401, admin: 200, curator: 200, auditor: 200, lab: 404 } },
		POST: { path: `/api/documents?subject=item&ref=${FACILITY_ITEM}&kind=other&name=a.txt`, body: '', expect: { anon: 401, admin: 'ok', curator: 'ok', auditor: 403, lab: 404 } }
	},
	'/api/documents/[id]': { GET: { path: `/api/documents/${SOME_UUID}`, expect: all(404, 401) } },
	'/api/documents/[id]/file': { GET: { path: `/api/documents/${SOME_UUID}/file`, expect: all(404, 401) } },
	'/api/blank-control-reports': {
		GET: { path: '/api/blank-control-reports', expect: all(200, 401) },
		POST: { path: '/api/blank-control-reports?title=x', body: '', expect: { anon: 401, admin: 422, curator: 422, auditor: 403, lab: 422 } }
	},
	'/api/blank-control-reports/template': { GET: { path: '/api/blank-control-reports/template', expect: all(200, 401) } },
	'/api/blank-control-reports/[id]': { GET: { path: `/api/blank-control-reports/${SOME_UUID}`, expect: all(404, 401) } },
	'/api/blank-control-reports/[id]/pdf': { GET: { path: `/api/blank-control-reports/${SOME_UUID}/pdf`, expect: all(404, 401) } },
	// handling
	'/handling': { GET: { path: '/handling', expect: only(['admin', 'curator', 'auditor'], 303) } },
	'/handling/new': {
		GET: { path: '/handling/new', expect: only(['admin', 'curator'], 303) },
		POST: { path: '/handling/new', body: 'items=', expect: only(['admin', 'curator'], 401) }
	},
	'/audit/items/[code]': { GET: { path: `/audit/items/${FACILITY_ITEM}`, expect: only(['admin', 'curator', 'auditor'], 303) } },
	'/api/handling-sessions': {
		GET: { path: '/api/handling-sessions', expect: only(['admin', 'curator', 'auditor'], 401) },
		POST: { path: '/api/handling-sessions', body: {}, expect: only(['admin', 'curator'], 401) }
	},
	'/api/handling-sessions/[id]': { GET: { path: `/api/handling-sessions/${SOME_UUID}`, expect: all(404, 401) } },
	'/api/items/[code]/exposure': { GET: { path: `/api/items/${FACILITY_ITEM}/exposure`, expect: { anon: 401, admin: 200, curator: 200, auditor: 200, lab: 404 } } },
	'/api/items/[code]/history': { GET: { path: `/api/items/${FACILITY_ITEM}/history`, expect: only(['admin', 'curator', 'auditor'], 401) } },
	'/api/splits/[id]/handling-session': { POST: { path: `/api/splits/${SOME_UUID}/handling-session`, body: {}, expect: only(['admin', 'curator'], 401) } },
	// trail
	'/api/trail/verify': { GET: { path: '/api/trail/verify', expect: only(['admin', 'auditor'], 401) } },
	'/api/trail/keys': {
		GET: { path: '/api/trail/keys', expect: only(['admin', 'auditor'], 401) },
		// without { "confirm": "rotate" } an admin gets 422, past the guard, and nothing rotates
		POST: { path: '/api/trail/keys', body: {}, expect: only(['admin'], 401) }
	},
	'/api/trail/checkpoints': { GET: { path: '/api/trail/checkpoints?last=1', expect: only(['admin', 'auditor'], 401) } },
	'/api/trail/export': { GET: { path: '/api/trail/export?from=1&to=3', expect: only(['admin', 'auditor'], 401) } },
	'/audit/trail': { GET: { path: '/audit/trail', expect: only(['admin', 'auditor'], 303) } },
	'/audit/trail/offline': { GET: { path: '/audit/trail/offline', expect: all(200, 200) } },
	// custody
	'/requests': { GET: { path: '/requests', expect: all(200, 303) } },
	'/requests/new': {
		GET: { path: '/requests/new', expect: only(['lab'], 303) },
		POST: { path: '/requests/new', body: 'massMg=', expect: only(['lab'], 401) }
	},
	'/requests/[id]': {
		GET: { path: `/requests/${SOME_UUID}`, expect: all(404, 303) },
		POST: { path: `/requests/${SOME_UUID}?/submit`, body: 'x=1', expect: only(['admin', 'curator', 'lab'], 401) }
	},
	'/transfers': { GET: { path: '/transfers', expect: all(200, 303) } },
	'/transfers/new': {
		GET: { path: `/transfers/new?request=${SOME_UUID}`, expect: only(['admin', 'curator', 'lab'], 303) },
		POST: { path: `/transfers/new?request=${SOME_UUID}`, body: 'container=', expect: only(['admin', 'curator', 'lab'], 401) }
	},
	'/transfers/[id]': {
		GET: { path: `/transfers/${SOME_UUID}`, expect: all(404, 303) },
		POST: { path: `/transfers/${SOME_UUID}?/cancel`, body: 'x=1', expect: only(['admin', 'curator', 'lab'], 401) }
	},
	'/api/requests': {
		GET: { path: '/api/requests', expect: all(200, 401) },
		POST: { path: '/api/requests', body: {}, expect: only(['lab'], 401) }
	},
	'/api/requests/[id]': {
		GET: { path: `/api/requests/${SOME_UUID}`, expect: all(404, 401) },
		PUT: { path: `/api/requests/${SOME_UUID}`, body: {}, expect: only(['lab'], 401) }
	},
	'/api/requests/[id]/submit': { POST: { path: `/api/requests/${SOME_UUID}/submit`, body: {}, expect: only(['lab'], 401) } },
	'/api/requests/[id]/withdraw': { POST: { path: `/api/requests/${SOME_UUID}/withdraw`, body: {}, expect: only(['lab'], 401) } },
	'/api/requests/[id]/review': { POST: { path: `/api/requests/${SOME_UUID}/review`, body: {}, expect: only(['admin', 'curator'], 401) } },
	'/api/requests/[id]/grant': { POST: { path: `/api/requests/${SOME_UUID}/grant`, body: {}, expect: only(['admin', 'curator'], 401) } },
	'/api/requests/[id]/decline': { POST: { path: `/api/requests/${SOME_UUID}/decline`, body: {}, expect: only(['admin', 'curator'], 401) } },
	'/api/requests/[id]/earmark': { POST: { path: `/api/requests/${SOME_UUID}/earmark`, body: {}, expect: only(['admin', 'curator'], 401) } },
	'/api/requests/[id]/plans': { GET: { path: `/api/requests/${SOME_UUID}/plans`, expect: only(['admin', 'curator'], 401) } },
	'/offer': { GET: { path: '/offer', expect: only(['admin', 'curator', 'lab', 'auditor'], 303) } },
	'/api/offer': { GET: { path: '/api/offer', expect: only(['admin', 'curator', 'lab', 'auditor'], 401) } },
	'/api/requests/[id]/usage': { POST: { path: `/api/requests/${SOME_UUID}/usage`, body: {}, expect: only(['lab'], 401) } },
	'/api/transfers': {
		GET: { path: '/api/transfers', expect: all(200, 401) },
		POST: { path: '/api/transfers', body: {}, expect: only(['admin', 'curator', 'lab'], 401) }
	},
	'/api/transfers/[id]': { GET: { path: `/api/transfers/${SOME_UUID}`, expect: all(404, 401) } },
	'/api/transfers/[id]/sign': { POST: { path: `/api/transfers/${SOME_UUID}/sign`, body: {}, expect: only(['admin', 'curator', 'lab'], 401) } },
	'/api/transfers/[id]/cancel': { POST: { path: `/api/transfers/${SOME_UUID}/cancel`, body: {}, expect: only(['admin', 'curator', 'lab'], 401) } },
	'/api/transfers/[id]/receipt': { GET: { path: `/api/transfers/${SOME_UUID}/receipt`, expect: all(404, 401) } },
	'/api/trail/events': { GET: { path: '/api/trail/events?limit=1', expect: only(['admin', 'auditor'], 401) } }
};

const EMAIL: Record<Exclude<Who, 'anon'>, string> = { admin: DEMO.admin, curator: DEMO.curator, lab: DEMO.fennick, auditor: DEMO.auditor };
const clients = {} as Record<Who, Client>;

beforeAll(async () => {
	clients.anon = client();
	for (const who of Object.keys(EMAIL) as Exclude<Who, 'anon'>[]) clients[who] = await signedIn(EMAIL[who]);
});

async function call(c: Client, method: string, k: Case) {
	if (typeof k.body === 'string') {
		return c.request(method, k.path, k.body, { 'content-type': 'application/x-www-form-urlencoded' });
	}
	return c.request(method, k.path, k.body);
}

describe('authorization matrix', () => {
	const routes = walkRoutes();

	it('has an entry for every route and method found under src/routes', () => {
		const missing = routes.flatMap((r) => r.methods.filter((m) => !MATRIX[r.id]?.[m]).map((m) => `${m} ${r.id}`));
		expect(missing).toEqual([]);
		const stale = Object.entries(MATRIX).flatMap(([id, ms]) => Object.keys(ms).filter((m) => !routes.find((r) => r.id === id)?.methods.includes(m)).map((m) => `${m} ${id}`));
		expect(stale).toEqual([]);
	});

	for (const [id, methods] of Object.entries(MATRIX)) {
		for (const [method, k] of Object.entries(methods)) {
			it(`${method} ${id}`, async () => {
				for (const who of Object.keys(k.expect) as Who[]) {
					const c = k.fresh && who !== 'anon' ? await signedIn(EMAIL[who]) : clients[who];
					const r = await call(c, method, k);
					const want = k.expect[who];
					const got = `${who}: ${r.status}`;
					if (want === 'ok') {
						expect(r.status, got).not.toBe(401);
						expect(r.status, got).not.toBe(403);
						expect(r.status, got).toBeLessThan(500);
					} else {
						expect(got).toBe(`${who}: ${want}`);
					}
					if (id.startsWith('/api/') && r.status >= 400) {
						expect(r.body?.error?.code, `${who} error shape`).toEqual(expect.any(String));
						expect(r.body?.error?.message, `${who} error shape`).toEqual(expect.any(String));
					}
				}
			});
		}
	}
});
