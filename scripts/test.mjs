// `npm test`: the same set-up as `npm start` against a fresh test database and fresh fake
// storage, then svelte-check, vitest, a production build and Playwright in Debian's Chromium.
import { spawnSync } from 'node:child_process';
import { ensureNodeModules, ensureTestTools, startStack, run, log } from './lib/stack.mjs';

/**
 * `npm audit` of the production dependencies: a high or critical finding fails the run. The audit
 * asks the registry; when it cannot be reached the run says so plainly and goes on.
 */
function audit() {
	const r = spawnSync('npm', ['audit', '--omit=dev', '--audit-level=high', '--json'], { encoding: 'utf8', timeout: 60_000 });
	let report = null;
	try {
		report = JSON.parse(r.stdout);
	} catch {
		/* no JSON: the registry was not reached */
	}
	if (!report?.metadata?.vulnerabilities) {
		const why = (report?.message ?? report?.error?.summary ?? r.stderr ?? r.error?.message ?? '').toString().split('\n')[0];
		log(`npm audit could not reach the registry, so the dependencies were NOT audited (${why || 'no answer'})`);
		return 0;
	}
	const v = report.metadata.vulnerabilities;
	log(`npm audit (production dependencies): ${v.critical} critical, ${v.high} high, ${v.moderate} moderate, ${v.low} low`);
	return v.critical + v.high > 0 ? 1 : 0;
}

const t0 = Date.now();
ensureNodeModules();
ensureTestTools();
const stack = await startStack('test', { fresh: true });
const env = { ...stack.env, NODE_ENV: 'test', REGOLOG_TEST: '1' };
process.on('SIGINT', () => { stack.stop(); process.exit(130); });

// While working on one part: `npm test -- --vitest=<file>[,<file>…] --e2e=<spec>[,…]` runs the same
// set-up, then only the build (when needed) and the named tests; `--check` adds svelte-check.
// With no arguments (CI, the README) every step runs.
const arg = (name) => process.argv.slice(2).find((a) => a.startsWith(`--${name}=`))?.slice(name.length + 3).split(',').filter(Boolean);
const onlyVitest = arg('vitest');
const onlyE2e = arg('e2e');
const focused = Boolean(onlyVitest || onlyE2e);
const wantCheck = !focused || process.argv.includes('--check');

let steps = [
	['npm audit', audit],
	['migrate and seed', process.execPath, ['--import', 'tsx', 'scripts/setup-db.ts', '--bucket']],
	['svelte-kit sync', 'npx', ['svelte-kit', 'sync']],
	['svelte-check', 'npx', ['svelte-check', '--tsconfig', './tsconfig.json', '--fail-on-warnings', '--threshold', 'error']],
	['build', 'npx', ['vite', 'build', '--logLevel', 'warn']],
	['vitest', 'npx', ['vitest', 'run']],
	['playwright', 'npx', ['playwright', 'test']]
];
if (focused) {
	steps = steps
		.filter(([name]) => name !== 'npm audit' && (wantCheck || name !== 'svelte-check'))
		.filter(([name]) => (name !== 'vitest' || onlyVitest) && (name !== 'playwright' || onlyE2e))
		.map((s) => (s[0] === 'vitest' ? ['vitest', 'npx', ['vitest', 'run', ...onlyVitest]] : s[0] === 'playwright' ? ['playwright', 'npx', ['playwright', 'test', ...onlyE2e]] : s));
}
let failed = null;
for (const [name, cmd, args] of steps) {
	const s = Date.now();
	log(`── ${name}`);
	if ((typeof cmd === 'function' ? cmd() : run(cmd, args, env)) !== 0) {
		failed = name;
		break;
	}
	log(`   ${name} done in ${((Date.now() - s) / 1000).toFixed(1)} s`);
}
stack.stop();
const secs = ((Date.now() - t0) / 1000).toFixed(1);
if (failed) {
	log(`FAILED at ${failed} after ${secs} s`);
	process.exit(1);
}
log(`all tests passed in ${secs} s`);
