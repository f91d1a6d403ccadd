// The lineage walks a tree one level at a time (migration 0054: root_id and the (root_id, depth,
// parent_id) index). Its answers are checked here against a lineage worked out independently in
// the test, from the items table itself: ancestors root first, descendants level by level in
// serial order, every entry's children counted, entries a lab does not hold withheld from its
// members, for random trees, starting items and depth limits. The database's own rules for the
// tree key are checked too: set on insert, never changed, a child one level below its parent.
import { describe, it, expect, beforeAll } from 'vitest';
import fc from 'fast-check';
import { signedIn, DEMO, type Client } from '../helpers/http';
import { newSpecimen } from '../helpers/registry';
import { asSuperuser } from '../helpers/scratch-db';

const DB = process.env.REGOLOG_DB_NAME ?? 'regolog_test';
let curator: Client;
let fennick: Client;
let fennickLab: { id: string; name: string };

beforeAll(async () => {
	[curator, fennick] = await Promise.all([signedIn(DEMO.curator), signedIn(DEMO.fennick)]);
	fennickLab = await asSuperuser(DB, async (c) => (await c.query(`SELECT l.id, l.name FROM labs l JOIN users u ON u.lab_id = l.id WHERE u.email = $1`, [DEMO.fennick])).rows[0]);
});

interface Row {
	id: string;
	parent_id: string | null;
	root_id: string;
	code: string;
	serial: number;
	depth: number;
	kind: string;
	state: string;
	mass_ug: string;
	initial_mass_ug: string;
	holder_lab_id: string | null;
	holder: string | null;
}

async function treeRows(root: string): Promise<Row[]> {
	return asSuperuser(DB, async (c) =>
		(await c.query(
			`SELECT i.id, i.parent_id, i.root_id, i.code, i.serial::int, i.depth, i.kind, i.state, i.mass_ug::text, i.initial_mass_ug::text, i.holder_lab_id, l.name AS holder
			 FROM items i LEFT JOIN labs l ON l.id = i.holder_lab_id WHERE i.root_id = (SELECT id FROM items WHERE code = $1)`,
			[root]
		)).rows
	);
}

/** The lineage as the API should give it, worked out from the rows alone. */
function expected(rows: Row[], code: string, depth: number | null, lab: string | null) {
	const byId = new Map(rows.map((r) => [r.id, r]));
	const children = new Map<string, Row[]>();
	for (const r of rows) if (r.parent_id) children.set(r.parent_id, [...(children.get(r.parent_id) ?? []), r]);
	const start = rows.find((r) => r.code === code)!;
	const entry = (r: Row, level: number) => ({
		code: r.code,
		parentCode: r.parent_id ? byId.get(r.parent_id)!.code : null,
		level,
		kind: r.kind,
		state: r.state,
		massUg: Number(r.mass_ug),
		initialMassUg: Number(r.initial_mass_ug),
		holder: r.holder ?? 'Facility',
		children: children.get(r.id)?.length ?? 0
	});
	const up: { r: Row; level: number }[] = [];
	for (let p = start.parent_id, level = -1; p; level--) {
		const r = byId.get(p)!;
		up.unshift({ r, level });
		p = r.parent_id;
	}
	const down: { r: Row; level: number }[] = [];
	let frontier = [start];
	for (let level = 1; frontier.length && (depth === null || level <= depth); level++) {
		frontier = frontier.flatMap((r) => children.get(r.id) ?? []).sort((a, b) => a.serial - b.serial);
		down.push(...frontier.map((r) => ({ r, level })));
	}
	const visible = (x: { r: Row }) => lab === null || x.r.holder_lab_id === lab;
	return {
		code,
		ancestors: up.filter(visible).map((x) => entry(x.r, x.level)),
		descendants: down.filter(visible).map((x) => entry(x.r, x.level)),
		withheld: [...up, ...down].filter((x) => !visible(x)).length,
		depth
	};
}

async function split(code: string, masses: number[]): Promise<string[]> {
	const r = await curator.post(`/api/items/${code}/splits`, { children: masses.map((massUg) => ({ massUg })) });
	expect(r.status, JSON.stringify(r.body)).toBe(201);
	return r.body.children.map((c: { code: string }) => c.code);
}

describe('lineage, one level per step', () => {
	it('answers exactly as the tree worked out from the items table, for random trees, starts and depths', async () => {
		await fc.assert(
			fc.asyncProperty(
				// each split: which existing item (by index, wrapped) and how many children
				fc.array(fc.record({ at: fc.nat(), n: fc.integer({ min: 1, max: 3 }) }), { minLength: 3, maxLength: 9 }),
				fc.array(fc.nat(), { minLength: 2, maxLength: 4 }),
				fc.nat(),
				async (splits, lent, seed) => {
					const root = await newSpecimen(curator, 100_000_000);
					const codes = [root];
					const mass = new Map([[root, 100_000_000]]);
					for (const s of splits) {
						const from = codes[s.at % codes.length];
						const each = Math.floor(mass.get(from)! / (s.n + 2));
						if (each < 1) continue;
						const made = await split(from, Array.from({ length: s.n }, () => each));
						mass.set(from, mass.get(from)! - each * s.n);
						for (const c of made) {
							codes.push(c);
							mass.set(c, each);
						}
					}
					// some items go to the lab, some of them with their state changed too, and in every other
					// run the root itself (whose lineage is read as one range of the tree, filtered by lab)
					const lentCodes = [...new Set([...(seed % 2 ? [root] : []), ...lent.map((i) => codes[1 + (i % (codes.length - 1))])])].filter(Boolean);
					await asSuperuser(DB, (c) => c.query(`UPDATE items SET holder_lab_id = $1, state = 'on_loan' WHERE code = ANY($2)`, [fennickLab.id, lentCodes]));
					const rows = await treeRows(root);
					expect(rows).toHaveLength(codes.length);

					const starts = [root, codes[seed % codes.length], codes[codes.length - 1]];
					for (const code of starts) {
						for (const depth of [null, 1, 2]) {
							const r = await curator.get(`/api/items/${code}/lineage${depth === null ? '' : `?depth=${depth}`}`);
							expect(r.status).toBe(200);
							expect(r.body).toEqual(expected(rows, code, depth, null));
						}
					}
					for (const code of lentCodes) {
						const r = await fennick.get(`/api/items/${code}/lineage`);
						expect(r.status).toBe(200);
						expect(r.body).toEqual(expected(rows, code, null, fennickLab.id));
					}
				}
			),
			{ numRuns: 8 }
		);
	});

	it('sets every item’s tree root on insert, keeps it, and refuses a child that is not one level below its parent', async () => {
		const root = await newSpecimen(curator, 1_000_000);
		const [a] = await split(root, [1000]);
		const [b] = await split(a, [100]);
		const rows = await treeRows(root);
		const id = (code: string) => rows.find((r) => r.code === code)!.id;
		expect(rows.map((r) => r.root_id)).toEqual([id(root), id(root), id(root)]);

		await asSuperuser(DB, async (c) => {
			await expect(c.query(`UPDATE items SET root_id = id WHERE code = $1`, [b])).rejects.toThrow('cannot change');
			// a root_id given on insert is not taken: the database works it out from the parent
			const col = (await c.query(`SELECT collection_id FROM items WHERE code = $1`, [root])).rows[0].collection_id;
			const next = (await c.query(`SELECT max(serial)::int + 1000 AS s FROM items WHERE collection_id = $1`, [col])).rows[0].s;
			await c.query('BEGIN');
			try {
				const ins = (code: string, depth: number, root_id: string) =>
					c.query(
						`INSERT INTO items (collection_id, serial, code, parent_id, depth, kind, description, initial_mass_ug, mass_ug, root_id)
						 VALUES ($1, $2, $3, $4, $5, 'aliquot', 'tree key check', 1, 1, $6) RETURNING root_id`,
						[col, next, code, id(b), depth, root_id]
					);
				expect((await ins('HLF-TREE-1', 3, id(b))).rows[0].root_id).toBe(id(root));
				await c.query('SAVEPOINT s');
				await expect(ins('HLF-TREE-2', 7, id(root))).rejects.toThrow('depth 7 under a parent at depth 2');
				await c.query('ROLLBACK TO SAVEPOINT s');
				await expect(ins('hlf-tree-3', 3, id(root))).rejects.toThrow('items_code_characters');
			} finally {
				await c.query('ROLLBACK');
			}
		});
	});
});
