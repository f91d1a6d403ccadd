// `npm run bench:plan`: the allocation planner and the offer at size, side by side with the item
// page in the same run. On load databases made by scripts/gen-load.ts (a generated collection of
// parent specimens split into aliquots, beside the demo):
// - at 10,000 items: GET /api/requests/{id}/plans for a one-piece and a two-piece request in the
//   generated collection, one request at a time (p50/p95; target p95 < 200 ms);
// - at 100,000 items: the offer page (/offer) and its data (/api/offer) under 16 concurrent clients,
//   beside the item page of a leaf aliquot measured the same way (target offer p95 < 150 ms), and
//   the first offer after a change, when the offer is computed afresh.
// REGOLOG_BENCH_SECONDS sets each autocannon run's length (default 10 s); BENCH_PLAN_RUNS the number
// of plan requests (default 100). Needs the production build (`npx vite build`).
import { quantileSorted } from 'simple-statistics';
import { generateLoad, LOAD_PREFIX } from './gen-load';
import { startApp, stopApp } from './lib/app-process';
import { profile } from './lib/profile.mjs';
import { stopCluster } from './lib/pg.mjs';
import { underLoad, type Measure } from './lib/under-load';

const SECONDS = Number(process.env.REGOLOG_BENCH_SECONDS ?? 10);
const RUNS = Number(process.env.BENCH_PLAN_RUNS ?? 100);
const CONNECTIONS = 16;
const TARGET_PLAN_P95_MS = 200;
const TARGET_OFFER_P95_MS = 150;
const PASSWORD = process.env.REGOLOG_DEMO_PASSWORD || 'brightwater-demo';
const log = (s: string) => console.log(`[bench:plan] ${s}`);
const port = profile('test').portBase + 8;


async function oneAtATime(url: string, cookie: string, runs: number) {
	const times: number[] = [];
	for (let i = 0; i < runs; i++) {
		const t0 = performance.now();
		const r = await fetch(url, { headers: { cookie } });
		await r.arrayBuffer();
		if (r.status !== 200) throw new Error(`${url} answered ${r.status}`);
		times.push(performance.now() - t0);
	}
	times.sort((a, b) => a - b);
	return { p50: quantileSorted(times, 0.5), p95: quantileSorted(times, 0.95) };
}

async function signIn(base: string, email: string): Promise<string> {
	const r = await fetch(`${base}/api/auth/sign-in`, { method: 'POST', headers: { 'content-type': 'application/json', origin: base }, body: JSON.stringify({ email, password: PASSWORD }) });
	if (r.status !== 200) throw new Error(`sign-in of ${email} failed: ${r.status}`);
	return r.headers.get('set-cookie')!.split(';')[0];
}

async function ask(base: string, cookie: string, massUg: number, pieces: number): Promise<string> {
	const r = await fetch(`${base}/api/requests`, {
		method: 'POST', headers: { 'content-type': 'application/json', origin: base, cookie },
		body: JSON.stringify({
			collection: LOAD_PREFIX, massUg, pieces, destructive: true, submit: true, constraints: { neverAmbient: true },
			analysisPlan: 'Benchmark request: chiral GC-MS with procedural blanks.', justification: 'Benchmark request of the allocation planner at size.'
		})
	});
	const body = await r.json();
	if (r.status !== 201) throw new Error(`request failed: ${r.status} ${JSON.stringify(body)}`);
	return body.request.id;
}

let fail = false;
let startedCluster: string | null = null;
const fmt = (m: { p50: number; p95: number }) => `p50 ${m.p50.toFixed(1)} ms, p95 ${m.p95.toFixed(1)} ms`;

// ---- plans at 10,000 items
log('generating 10,000 items…');
const small = await generateLoad({ items: 10_000, events: 10_000, dbName: 'regolog_load_10k', log: (x) => log(`  ${x}`) });
if (small.clusterStarted) startedCluster = small.clusterRoot;
const plans: Record<string, { p50: number; p95: number; plans: number; qualifying: number }> = {};
{
	const app = await startApp(port, { REGOLOG_DB_PORT: String(small.port), REGOLOG_DB_NAME: small.dbName, NODE_ENV: 'production' }, { healthy: false });
	try {
		const lab = await signIn(app.base, 'analyst@fennick.example');
		const curator = await signIn(app.base, 'curator@brightwater.example');
		const cases = { 'one piece of 2 mg': await ask(app.base, lab, 2_000, 1), 'two pieces of 1 mg (mixed-integer programme)': await ask(app.base, lab, 2_000, 2) };
		for (const [name, id] of Object.entries(cases)) {
			const url = `${app.base}/api/requests/${id}/plans`;
			const first = await (await fetch(url, { headers: { cookie: curator } })).json();
			const m = await oneAtATime(url, curator, RUNS);
			plans[name] = { ...m, plans: first.plans.length, qualifying: first.qualifying };
			log(`  plans, ${name}: ${fmt(m)} over ${RUNS} requests; ${first.qualifying} qualifying items, ${first.kept} kept after the Pareto reduction, ${first.plans.length} plans`);
			if (!first.plans.length) fail = true;
		}
	} finally {
		await stopApp(app);
	}
}

// ---- the offer at 100,000 items, beside the item page
log('generating 100,000 items…');
const large = await generateLoad({ items: 100_000, events: 100_000, dbName: 'regolog_load_offer', log: (x) => log(`  ${x}`) });
if (large.clusterStarted) startedCluster = large.clusterRoot;
const pages: Record<string, Measure> = {};
let cold = 0;
{
	const app = await startApp(port, { REGOLOG_DB_PORT: String(large.port), REGOLOG_DB_NAME: large.dbName, NODE_ENV: 'production' }, { healthy: false });
	try {
		const lab = await signIn(app.base, 'analyst@fennick.example');
		const curator = await signIn(app.base, 'curator@brightwater.example');
		const t0 = performance.now();
		const r = await fetch(`${app.base}/offer`, { headers: { cookie: lab } });
		await r.arrayBuffer();
		cold = performance.now() - t0;
		log(`  first offer page (the offer computed for ${large.items.toLocaleString('en')} generated items and the demo): ${cold.toFixed(0)} ms`);
		const targets: [string, string, string][] = [
			['item page, leaf aliquot (/items/…)', `/items/${large.leaf}`, curator],
			['offer page (/offer)', '/offer', lab],
			['offer page, filtered and sorted', `/offer?collection=${LOAD_PREFIX}&neverAmbient=true&sort=mass&dir=desc`, lab],
			['offer data (/api/offer)', '/api/offer?limit=50', lab]
		];
		for (const [name, path, cookie] of targets) {
			pages[name] = await underLoad(app.base + path, cookie, { connections: CONNECTIONS, seconds: SECONDS });
			log(`  ${name}: ${fmt(pages[name])}, ${pages[name].rps.toFixed(0)} req/s, ${pages[name].non2xx} non-2xx, ${pages[name].errors} errors`);
			if (pages[name].non2xx || pages[name].errors) fail = true;
		}
	} finally {
		await stopApp(app);
	}
}
if (startedCluster) stopCluster({ root: startedCluster, log: () => {} });

console.log(`\n[bench:plan] plans for a request against a collection of 10,000 items (one request at a time, ${RUNS} runs)`);
for (const [name, m] of Object.entries(plans)) {
	const met = m.p95 < TARGET_PLAN_P95_MS;
	if (!met) fail = true;
	console.log(`  ${name.padEnd(46)} ${fmt(m)} = ${(m.p95 / TARGET_PLAN_P95_MS).toFixed(2)} × the ${TARGET_PLAN_P95_MS} ms target → ${met ? 'met' : 'MISSED'}`);
}
const item = pages['item page, leaf aliquot (/items/…)'];
console.log(`\n[bench:plan] at 100,000 items under ${CONNECTIONS} concurrent clients, ${SECONDS} s each, beside the item page of the same run`);
for (const [name, m] of Object.entries(pages)) {
	console.log(`  ${name.padEnd(46)} ${fmt(m)} (p95 ×${(m.p95 / item.p95).toFixed(2)} of the item page's)`);
}
const offer = pages['offer page (/offer)'];
const met = offer.p95 < TARGET_OFFER_P95_MS;
if (!met) fail = true;
console.log(`\n[bench:plan] offer page p95 at 100k items: ${offer.p95.toFixed(1)} ms = ${(offer.p95 / TARGET_OFFER_P95_MS).toFixed(2)} × the ${TARGET_OFFER_P95_MS} ms target → ${met ? 'met' : 'MISSED'}; item page p95 ${item.p95.toFixed(1)} ms in the same run`);
console.log(`[bench:plan] the first offer after a change is computed afresh: ${cold.toFixed(0)} ms (then kept until the collections' items, rules, sessions or blank analyses change)`);
process.exit(fail ? 1 : 0);
