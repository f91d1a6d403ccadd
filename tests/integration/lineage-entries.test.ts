// Every item carries its lineage entry and its number of children, kept by the database (migration
// 0055). Checked here on a database of its own: the migration fills both for items that were there
// before it; an item inserted by any path counts for its parent; the entry always says what the
// columns, the parent's code and the holder lab's name say; nobody sets a count by hand; and the
// migration undoes and redoes cleanly.
import { describe, it, expect, afterAll } from 'vitest';
import { QueryTypes } from 'sequelize';
import { migrator } from '../../src/lib/server/migrator';
import { scratchDatabase } from '../helpers/scratch-db';

const scratch = await scratchDatabase('entries');
afterAll(() => scratch.drop());
const sq = scratch.sequelize;
const rows = <T extends object>(sql: string, replacements: Record<string, unknown> = {}) => sq.query<T>(sql, { type: QueryTypes.SELECT, replacements });

interface Item {
	code: string;
	parent_code: string | null;
	kind: string;
	state: string;
	mass_ug: string;
	initial_mass_ug: string;
	holder: string | null;
	children: number;
	child_count: number;
	lineage_entry: string;
}

/** Every item with what its entry should say, worked out from the tables (children counted here). */
const items = () =>
	rows<Item>(`SELECT i.code, p.code AS parent_code, i.kind, i.state, i.mass_ug::text, i.initial_mass_ug::text, l.name AS holder,
	                   (SELECT count(*)::int FROM items k WHERE k.parent_id = i.id) AS children, i.child_count, i.lineage_entry
	            FROM items i LEFT JOIN items p ON p.id = i.parent_id LEFT JOIN labs l ON l.id = i.holder_lab_id ORDER BY i.serial`);

/** Each stored entry, closed as the lineage closes it, parses to exactly what the columns say. */
async function expectEntriesTrue() {
	const all = await items();
	expect(all.length).toBeGreaterThan(0);
	for (const i of all) {
		expect(i.child_count).toBe(i.children);
		expect(JSON.parse(i.lineage_entry + ',"level":3}')).toEqual({
			code: i.code,
			parentCode: i.parent_code,
			kind: i.kind,
			state: i.state,
			massUg: Number(i.mass_ug),
			initialMassUg: Number(i.initial_mass_ug),
			holder: i.holder ?? 'Facility',
			children: i.children,
			level: 3
		});
	}
	return all;
}

async function insertItem(serial: number, parent: string | null, depth: number) {
	await sq.query(
		`INSERT INTO items (collection_id, serial, code, parent_id, depth, kind, description, initial_mass_ug, mass_ug)
		 SELECT c.id, :serial, :code, (SELECT id FROM items WHERE code = :parent), :depth, :kind, 'entry check', 1000, 1000 - :serial
		 FROM collections c WHERE c.prefix = 'ENT'`,
		{ replacements: { serial, code: `ENT-${serial}`, parent, depth, kind: parent ? 'aliquot' : 'specimen' } }
	);
}

describe('lineage entries kept by the database', () => {
	it('are filled for existing items, follow every change, count children by any path, and undo cleanly', async () => {
		const m = migrator(sq);
		await m.up({ to: '0054-item-tree-levels.js' });
		// a tree as it stood before migration 0055: a root, three children, a grandchild, one lent to a lab
		await sq.query(`INSERT INTO collections (prefix, name, kind, reserve_fraction, loss_tolerance_ug) VALUES ('ENT', 'Entry check', 'laboratory_analogue', 0.5, 1000)`);
		await sq.query(`INSERT INTO labs (name, short_name) VALUES ('Quill "Trace" Lab – Øster', 'QTL')`);
		await insertItem(1, null, 0);
		for (const s of [2, 3, 4]) await insertItem(s, 'ENT-1', 1);
		await insertItem(5, 'ENT-3', 2);
		await sq.query(`UPDATE items SET holder_lab_id = (SELECT id FROM labs WHERE short_name = 'QTL'), state = 'on_loan' WHERE code = 'ENT-4'`);

		await m.up({ to: '0055-item-lineage-entries.js' });
		const before = await expectEntriesTrue();
		expect(before.map((i) => i.child_count)).toEqual([3, 0, 1, 0, 0]);
		expect(JSON.parse(before[3].lineage_entry + '}').holder).toBe('Quill "Trace" Lab – Øster');

		// two children inserted in one statement, behind any app code: the parent counts both
		await sq.query(
			`INSERT INTO items (collection_id, serial, code, parent_id, depth, kind, description, initial_mass_ug, mass_ug)
			 SELECT c.id, s, 'ENT-' || s, (SELECT id FROM items WHERE code = 'ENT-5'), 3, 'aliquot', 'entry check', 10, 10
			 FROM collections c, generate_series(6, 7) s WHERE c.prefix = 'ENT'`
		);
		// mass, state and holder change; the lab takes a new name
		await sq.query(`UPDATE items SET mass_ug = 17, state = 'earmarked' WHERE code = 'ENT-2'`);
		await sq.query(`UPDATE labs SET name = 'Quill Trace Laboratory' WHERE short_name = 'QTL'`);
		const after = await expectEntriesTrue();
		expect(after.find((i) => i.code === 'ENT-5')!.child_count).toBe(2);
		expect(JSON.parse(after.find((i) => i.code === 'ENT-4')!.lineage_entry + '}').holder).toBe('Quill Trace Laboratory');

		// a count or an entry written by hand does not stand
		await expect(sq.query(`UPDATE items SET child_count = 9 WHERE code = 'ENT-2'`)).rejects.toThrow('counted by the database');
		await sq.query(`UPDATE items SET lineage_entry = '{"code":"FAKE"' WHERE code = 'ENT-2'`);
		await expectEntriesTrue();

		// undone and done again: the same counts and entries
		await m.down({ to: '0055-item-lineage-entries.js' });
		const [gone] = await rows<{ n: number }>(`SELECT count(*)::int AS n FROM information_schema.columns WHERE table_name = 'items' AND column_name IN ('child_count', 'lineage_entry')`);
		expect(gone.n).toBe(0);
		await m.up();
		expect(await expectEntriesTrue()).toEqual(after);
	});
});
