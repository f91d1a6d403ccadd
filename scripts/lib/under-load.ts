// One page or API answer timed under concurrent clients with autocannon, as the page benchmarks
// report it: p50 and p95 of every response's latency, requests per second, errors and non-2xx answers.
import autocannon from 'autocannon';
import { quantileSorted } from 'simple-statistics';

export interface Measure { p50: number; p95: number; rps: number; errors: number; non2xx: number }

export async function underLoad(url: string, cookie: string, opts: { connections: number; seconds: number }): Promise<Measure> {
	const times: number[] = [];
	const inst = autocannon({ url, connections: opts.connections, duration: opts.seconds, headers: { cookie } });
	inst.on('response', (_c: unknown, _status: number, _bytes: number, ms: number) => times.push(ms));
	const r = await inst;
	times.sort((a, b) => a - b);
	return { p50: quantileSorted(times, 0.5), p95: quantileSorted(times, 0.95), rps: r.requests.average, errors: r.errors, non2xx: r.non2xx };
}
