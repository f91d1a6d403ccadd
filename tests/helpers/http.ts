// A small HTTP client for the integration tests: signs in through the JSON API and keeps the cookie.
export const BASE = `http://127.0.0.1:${process.env.REGOLOG_API_TEST_PORT ?? 24325}`;
export const DEMO_PASSWORD = process.env.REGOLOG_DEMO_PASSWORD || 'brightwater-demo';

export const DEMO = {
	admin: 'admin@brightwater.example',
	curator: 'curator@brightwater.example',
	auditor: 'auditor@brightwater.example',
	fennick: 'analyst@fennick.example',
	marrow: 'analyst@marrow.example'
} as const;

export interface Client {
	cookie: string | null;
	bearer?: string;
	request(method: string, path: string, body?: unknown, headers?: Record<string, string>): Promise<{ status: number; body: any; headers: Headers }>;
	get(path: string): Promise<{ status: number; body: any; headers: Headers }>;
	post(path: string, body?: unknown): Promise<{ status: number; body: any; headers: Headers }>;
}

export function client(cookie: string | null = null, bearer?: string): Client {
	const c: Client = {
		cookie,
		bearer,
		async request(method, path, body, headers = {}) {
			const h: Record<string, string> = { origin: BASE, ...headers };
			if (c.cookie) h.cookie = c.cookie;
			if (c.bearer) h.authorization = `Bearer ${c.bearer}`;
			let payload: string | undefined;
			if (body !== undefined) {
				h['content-type'] ??= 'application/json';
				payload = typeof body === 'string' ? body : JSON.stringify(body);
			}
			const res = await fetch(BASE + path, { method, headers: h, body: payload, redirect: 'manual' });
			const set = res.headers.get('set-cookie');
			if (set && set.startsWith('regolog_session=')) {
				const v = set.split(';')[0];
				c.cookie = v === 'regolog_session=' ? null : v;
			}
			const text = await res.text();
			let parsed: any = text;
			try {
				parsed = JSON.parse(text);
			} catch {
				/* not JSON */
			}
			return { status: res.status, body: parsed, headers: res.headers };
		},
		get: (path) => c.request('GET', path),
		post: (path, body) => c.request('POST', path, body ?? {})
	};
	return c;
}

export async function signedIn(email: string, password = DEMO_PASSWORD): Promise<Client> {
	const c = client();
	const r = await c.post('/api/auth/sign-in', { email, password });
	if (r.status !== 200) throw new Error(`sign-in of ${email} failed: ${r.status} ${JSON.stringify(r.body)}`);
	return c;
}
