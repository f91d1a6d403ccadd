// A computed lineage is kept with its collection's lineage_version (migration 0051) and served
// again only while that version stands: any change to the collection's items, made by the app or
// directly in the database, and any lab's new name, make the next answer a fresh one.
import { describe, it, expect, beforeAll } from 'vitest';
import { signedIn, DEMO, type Client } from '../helpers/http';
import { newSpecimen } from '../helpers/registry';
import { asSuperuser } from '../helpers/scratch-db';

const DB = process.env.REGOLOG_DB_NAME ?? 'regolog_test';
let curator: Client;

beforeAll(async () => {
	curator = await signedIn(DEMO.curator);
});

async function lineage(code: string) {
	const r = await curator.get(`/api/items/${code}/lineage`);
	expect(r.status).toBe(200);
	return { body: r.body, queries: Number(r.headers.get('x-regolog-queries')) };
}
const entry = (l: { body: { descendants: { code: string }[] } }, code: string) => l.body.descendants.find((d) => d.code === code) as Record<string, unknown>;

describe('lineage answers kept in memory', () => {
	it('are served again while nothing changes, and recomputed after any change to the tree', async () => {
		const root = await newSpecimen(curator, 10_000_000);
		const split = await curator.post(`/api/items/${root}/splits`, { children: [{ massUg: 1000 }, { massUg: 2000 }] });
		expect(split.status).toBe(201);
		const [a, b] = split.body.children.map((c: { code: string }) => c.code);

		const first = await lineage(root);
		expect(first.body.descendants).toHaveLength(2);
		const again = await lineage(root);
		expect(again.body).toEqual(first.body);
		// the second answer needed no recursive query
		expect(again.queries).toBeGreaterThan(0);
		expect(again.queries).toBeLessThan(first.queries);

		// a split further down the tree: new items and a changed mass
		expect((await curator.post(`/api/items/${a}/splits`, { children: [{ massUg: 100 }] })).status).toBe(201);
		const grown = await lineage(root);
		expect(grown.body.descendants).toHaveLength(3);
		expect(entry(grown, a)).toMatchObject({ massUg: 900, children: 1 });

		// a change made behind the app's back still counts
		await asSuperuser(DB, (c) => c.query(`UPDATE items SET state = 'earmarked' WHERE code = $1`, [b]));
		const changed = await lineage(root);
		expect(entry(changed, b)).toMatchObject({ state: 'earmarked' });
		expect(changed.queries).toBe(first.queries);

		// a lab's new name shows as the holder, exactly, whatever characters JSON must escape in it
		const lab = `Lineage "Cache" Lab \\ ${Date.now()}\t– Łódź`;
		await asSuperuser(DB, async (c) => {
			const { rows: [l] } = await c.query(`INSERT INTO labs (name, short_name) VALUES ($1, $2) RETURNING id`, [lab, `LCL${Date.now() % 1e6}`]);
			await c.query(`UPDATE items SET holder_lab_id = $1, state = 'on_loan' WHERE code = $2`, [l.id, b]);
		});
		expect(entry(await lineage(root), b)).toMatchObject({ holder: lab, state: 'on_loan' });
		await asSuperuser(DB, (c) => c.query(`UPDATE labs SET name = $1 WHERE name = $2`, [`${lab} (renamed)`, lab]));
		expect(entry(await lineage(root), b)).toMatchObject({ holder: `${lab} (renamed)` });

		// and the leaf's own lineage (its ancestors) follows the same rule
		const up = await lineage(b);
		expect(up.body.ancestors.map((x: { code: string }) => x.code)).toEqual([root]);
		expect((await lineage(b)).queries).toBeLessThan(up.queries);
	});
});
