// Starts the production build on its own port for the HTTP-level integration tests.
import { spawn, type ChildProcess } from 'node:child_process';
import { existsSync } from 'node:fs';

export const API_PORT = Number(process.env.REGOLOG_API_TEST_PORT ?? 24325);
let server: ChildProcess | null = null;

export async function setup() {
	if (!existsSync('build/index.js')) throw new Error('build/ is missing: `npm test` builds before vitest runs');
	server = spawn(process.execPath, ['build'], {
		// A keep-alive longer than the clients' own, so a reused socket is never closed under a request.
		env: { ...process.env, PORT: String(API_PORT), HOST: '127.0.0.1', ORIGIN: `http://127.0.0.1:${API_PORT}`, KEEP_ALIVE_TIMEOUT: '65', REGOLOG_COUNT_QUERIES: '1' },
		stdio: ['ignore', 'inherit', 'inherit']
	});
	const until = Date.now() + 30_000;
	while (Date.now() < until) {
		try {
			const r = await fetch(`http://127.0.0.1:${API_PORT}/api/health`);
			if (r.ok) return;
		} catch {
			/* not yet */
		}
		await new Promise((r) => setTimeout(r, 200));
	}
	throw new Error('the app did not become healthy for the integration tests');
}

export async function teardown() {
	server?.kill('SIGTERM');
}
