import { describe, it, expect, beforeAll } from 'vitest';
import { signedIn, DEMO, type Client } from '../helpers/http';
import { newSpecimen } from '../helpers/registry';

let curator: Client;
let auditor: Client;
beforeAll(async () => {
	curator = await signedIn(DEMO.curator);
	auditor = await signedIn(DEMO.auditor);
});

async function closes(code: string) {
	const item = (await curator.get(`/api/items/${code}`)).body.item;
	const ledger = (await curator.get(`/api/items/${code}/ledger`)).body;
	return { item, ledger };
}

describe('concurrent splits through the HTTP API', () => {
	it('50 simultaneous 1 mg splits of one 10 mg parent: exactly 10 succeed, the rest get 409, the parent ends at 0', async () => {
		const parent = await newSpecimen(curator, 10_000);
		const answers = await Promise.all(Array.from({ length: 50 }, () => curator.post(`/api/items/${parent}/splits`, { children: [{ massUg: 1_000 }] })));
		const statuses = answers.map((a) => a.status);
		expect(statuses.filter((s) => s === 201)).toHaveLength(10);
		expect(statuses.filter((s) => s === 409)).toHaveLength(40);
		for (const a of answers.filter((x) => x.status === 409)) expect(a.body.error.code).toBe('budget_exceeded');
		const children = answers.filter((a) => a.status === 201).map((a) => a.body.children[0].code);
		expect(new Set(children).size).toBe(10);
		const { item, ledger } = await closes(parent);
		expect(item.massUg).toBe(0);
		expect(item.budget).toMatchObject({ childrenInitialUg: 10_000, remainingUg: 0, children: 10, balanced: true });
		expect(ledger.closes).toBe(true);
		expect(ledger.entries.map((e: { balanceUg: number }) => e.balanceUg)).toEqual(Array.from({ length: 11 }, (_, i) => 10_000 - 1_000 * i));
	});

	it('many parents at once: each gives exactly what it holds and no more', async () => {
		const masses = [5_000, 3_000, 7_000, 1_000, 4_000, 6_000];
		const parents = await Promise.all(masses.map((m) => newSpecimen(curator, m)));
		const requests = parents.flatMap((code) => Array.from({ length: 12 }, () => ({ code, p: curator.post(`/api/items/${code}/splits`, { children: [{ massUg: 1_000 }] }) })));
		const done = await Promise.all(requests.map(async (r) => ({ code: r.code, status: (await r.p).status })));
		for (const [i, code] of parents.entries()) {
			const mine = done.filter((d) => d.code === code);
			expect(mine.filter((d) => d.status === 201)).toHaveLength(masses[i] / 1_000);
			expect(mine.filter((d) => d.status === 409)).toHaveLength(12 - masses[i] / 1_000);
			const { item, ledger } = await closes(code);
			expect(item.massUg).toBe(0);
			expect(item.budget.balanced).toBe(true);
			expect(ledger.closes).toBe(true);
		}
		// serials stay gapless and unique across all the concurrent splits
		const list = await curator.get('/api/items?collection=HLF&sort=code&dir=desc&limit=40');
		const serials = list.body.items.map((i: { code: string }) => Number(i.code.split(/[-/]/)[1]));
		expect(serials).toEqual(serials.map((_: number, k: number) => serials[0] - k));
	});

	it('splits and registrations in one collection at once: all succeed, serials gapless, one trail chain', async () => {
		const parents = await Promise.all(Array.from({ length: 6 }, () => newSpecimen(curator, 50_000)));
		// registrations take the collection's serials in one statement and append the trail in the next;
		// a split does both in one statement: the locks must come in the same order, or these deadlock
		const work = [
			...parents.flatMap((code) => Array.from({ length: 4 }, () => curator.post(`/api/items/${code}/splits`, { children: [{ massUg: 1_000 }, { massUg: 2_000 }] }))),
			...Array.from({ length: 20 }, (_, i) => curator.post('/api/items', { collection: 'HLF', massUg: 10_000 + i, description: `registered while splitting ${i}` }))
		];
		const answers = await Promise.all(work);
		expect(answers.map((a) => a.status)).toEqual(answers.map(() => 201));
		const list = await curator.get('/api/items?collection=HLF&sort=code&dir=desc&limit=68');
		const serials = list.body.items.map((i: { code: string }) => Number(i.code.split(/[-/]/)[1]));
		// the 24 splits' 48 children and the 20 registrations: the newest 68 serials, without a gap
		expect(serials).toHaveLength(68);
		expect(serials).toEqual(serials.map((_: number, k: number) => serials[0] - k));
		const verify = await auditor.get('/api/trail/verify');
		expect(verify.body).toMatchObject({ ok: true, firstBrokenAt: null });
	});
});

