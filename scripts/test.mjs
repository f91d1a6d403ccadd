// `npm test`: the same set-up as `npm start` against a fresh test database and fresh fake
// storage, then svelte-check, vitest, a production build and Playwright in Debian's Chromium.
import { ensureNodeModules, ensureTestTools, startStack, run, log } from './lib/stack.mjs';

const t0 = Date.now();
ensureNodeModules();
ensureTestTools();
const stack = await startStack('test', { fresh: true });
const env = { ...stack.env, NODE_ENV: 'test', REGOLOG_TEST: '1' };
process.on('SIGINT', () => { stack.stop(); process.exit(130); });

const steps = [
	['migrate and seed', process.execPath, ['--import', 'tsx', 'scripts/setup-db.ts', '--bucket']],
	['svelte-kit sync', 'npx', ['svelte-kit', 'sync']],
	['svelte-check', 'npx', ['svelte-check', '--tsconfig', './tsconfig.json', '--fail-on-warnings', '--threshold', 'error']],
	['build', 'npx', ['vite', 'build', '--logLevel', 'warn']],
	['vitest', 'npx', ['vitest', 'run']],
	['playwright', 'npx', ['playwright', 'test']]
];
let failed = null;
for (const [name, cmd, args] of steps) {
	const s = Date.now();
	log(`── ${name}`);
	if (run(cmd, args, env) !== 0) {
		failed = name;
		break;
	}
	log(`   ${name} passed in ${((Date.now() - s) / 1000).toFixed(1)} s`);
}
stack.stop();
const secs = ((Date.now() - t0) / 1000).toFixed(1);
if (failed) {
	log(`FAILED at ${failed} after ${secs} s`);
	process.exit(1);
}
log(`all tests passed in ${secs} s`);
