// `npm start`: install what is missing, start PostgreSQL and the fakes, migrate, seed the demo,
// build when the build is missing or stale, and serve the app until Ctrl-C.
import { spawn } from 'node:child_process';
import { ensureNodeModules, startStack, run, buildIsStale, waitForPort, log } from './lib/stack.mjs';

const t0 = Date.now();
ensureNodeModules();
const stack = await startStack('dev');
const { env } = stack;
let app = null;
const shutdown = (code = 0) => {
	if (app && app.exitCode === null) app.kill('SIGTERM');
	stack.stop();
	process.exit(code);
};
process.on('SIGINT', () => shutdown(0));
process.on('SIGTERM', () => shutdown(0));

try {
	if (run(process.execPath, ['--import', 'tsx', 'scripts/setup-db.ts', '--bucket'], env) !== 0) throw new Error('migration or seed failed');
	if (buildIsStale()) {
		log('building the app (vite build)…');
		if (run('npx', ['vite', 'build', '--logLevel', 'warn'], env) !== 0) throw new Error('build failed');
	}
	app = spawn(process.execPath, ['build'], { stdio: 'inherit', env: { ...process.env, ...env } });
	app.on('exit', (code) => { log(`app exited (${code})`); shutdown(code ?? 1); });
	await waitForPort(Number(env.PORT), 'the app');
	log(`Regolog is serving at http://127.0.0.1:${env.PORT}  (ready in ${((Date.now() - t0) / 1000).toFixed(1)} s; Ctrl-C stops everything)`);
	const pw = process.env.REGOLOG_DEMO_PASSWORD ?? 'brightwater-demo';
	log(`demo accounts (password "${pw}"): admin@brightwater.example, curator@brightwater.example, auditor@brightwater.example, analyst@fennick.example, analyst@marrow.example`);
} catch (e) {
	console.error(`[regolog] ${e.message}`);
	shutdown(1);
}
