// An app server of its own for fault tests and page benchmarks: the production build on a port
// of its choosing, against a database and fakes the caller chooses, that it may kill and restart.
import { spawn, type ChildProcess } from 'node:child_process';
import { existsSync } from 'node:fs';

export interface AppProcess {
	base: string;
	child: ChildProcess;
	output: () => string;
	exited: Promise<number | null>;
}

export async function startApp(port: number, env: Record<string, string>, { healthy = true } = {}): Promise<AppProcess> {
	if (!existsSync('build/index.js')) throw new Error('build/ is missing: `npm test` builds before vitest runs');
	const base = `http://127.0.0.1:${port}`;
	const child = spawn(process.execPath, ['build'], {
		env: { ...process.env, ...env, PORT: String(port), HOST: '127.0.0.1', ORIGIN: base, KEEP_ALIVE_TIMEOUT: '65' },
		stdio: ['ignore', 'pipe', 'pipe']
	});
	let out = '';
	child.stdout!.on('data', (d) => (out = (out + d).slice(-20_000)));
	child.stderr!.on('data', (d) => (out = (out + d).slice(-20_000)));
	const exited = new Promise<number | null>((r) => child.once('exit', (code) => r(code)));
	const until = Date.now() + 30_000;
	while (Date.now() < until) {
		if (child.exitCode !== null) throw new Error(`the app exited with ${child.exitCode}:\n${out}`);
		try {
			const r = await fetch(`${base}/api/health`);
			if (!healthy || r.ok) return { base, child, output: () => out, exited };
		} catch {
			/* not listening yet */
		}
		await new Promise((r) => setTimeout(r, 200));
	}
	child.kill('SIGKILL');
	throw new Error(`the app on ${base} did not become healthy:\n${out}`);
}

/** Stops the app; one that has not exited within a few seconds of SIGTERM is killed. */
export async function stopApp(app: AppProcess | null, signal: NodeJS.Signals = 'SIGTERM') {
	if (!app || app.child.exitCode !== null || app.child.signalCode !== null) return;
	app.child.kill(signal);
	const late = setTimeout(() => app.child.kill('SIGKILL'), 5000);
	await app.exited;
	clearTimeout(late);
}

export interface Answer {
	status: number;
	body: any;
	text: string;
	type: string;
}

/** A cookie-keeping JSON client for an app at any address. */
export function httpAt(base: string) {
	let cookie: string | null = null;
	const request = async (method: string, path: string, body?: unknown): Promise<Answer> => {
		const headers: Record<string, string> = { origin: base };
		if (cookie) headers.cookie = cookie;
		if (body !== undefined) headers['content-type'] = 'application/json';
		const res = await fetch(base + path, { method, headers, body: body === undefined ? undefined : JSON.stringify(body), redirect: 'manual' });
		const set = res.headers.get('set-cookie');
		if (set?.startsWith('regolog_session=')) cookie = set.split(';')[0];
		const text = await res.text();
		let parsed: any = text;
		try {
			parsed = JSON.parse(text);
		} catch {
			/* not JSON */
		}
		return { status: res.status, body: parsed, text, type: res.headers.get('content-type') ?? '' };
	};
	return {
		request,
		get: (p: string) => request('GET', p),
		post: (p: string, b: unknown = {}) => request('POST', p, b),
		async signIn(email: string, password = process.env.REGOLOG_DEMO_PASSWORD || 'brightwater-demo') {
			const r = await request('POST', '/api/auth/sign-in', { email, password });
			if (r.status !== 200) throw new Error(`sign-in of ${email} at ${base} failed: ${r.status} ${r.text}`);
		}
	};
}
