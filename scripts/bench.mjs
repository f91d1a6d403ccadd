// `npm run bench`: every benchmark of the project, one after the other: each `bench:*` script in
// package.json, so a benchmark added later runs too. Each prints its own figures.
import { readFileSync } from 'node:fs';
import { spawnSync } from 'node:child_process';

const scripts = Object.keys(JSON.parse(readFileSync('package.json', 'utf8')).scripts).filter((s) => s.startsWith('bench:')).sort();
const outcome = [];
for (const s of scripts) {
	console.log(`\n[bench] ── npm run ${s}`);
	const t = Date.now();
	const r = spawnSync('npm', ['run', '--silent', s], { stdio: 'inherit' });
	outcome.push([s, r.status === 0 ? 'ok' : `exit ${r.status}`, ((Date.now() - t) / 1000).toFixed(1)]);
}
console.log('\n[bench] summary');
for (const [s, st, secs] of outcome) console.log(`  ${s.padEnd(16)} ${st.padEnd(8)} ${secs} s`);
process.exit(outcome.every(([, st]) => st === 'ok') ? 0 : 1);
