// Migration 0090 writes every item code with a slash before its check character (PREFIX-NNNNN/C)
// and 0091 records a transfer's dry-ice mass. Checked on a database of its own, from a registry as
// it stood before them: stored codes, lineage entries and the database's own item_code() follow
// src/lib/domain/codes.ts; a signature given over a manifest that quoted the older codes still
// verifies; a transfer prepared afterwards binds the new codes and the dry-ice mass; both undo.
import { describe, it, expect, afterAll } from 'vitest';
import { QueryTypes } from 'sequelize';
import canonicalize from 'canonicalize';
import { migrator } from '../../src/lib/server/migrator';
import { formatCode, legacyCode } from '../../src/lib/domain/codes';
import { manifestOf, sha256 } from '../../src/lib/server/custody/manifest';
import { TRANSFER_SELECT, type TransferRow } from '../../src/lib/server/custody/transfer-rows';
import { scratchDatabase } from '../helpers/scratch-db';

const scratch = await scratchDatabase('codes');
afterAll(() => scratch.drop());
const sq = scratch.sequelize;
const rows = <T extends object>(sql: string, replacements: Record<string, unknown> = {}) => sq.query<T>(sql, { type: QueryTypes.SELECT, replacements });
const one = async <T extends object>(sql: string, replacements: Record<string, unknown> = {}) => (await rows<T>(sql, replacements))[0];

const codes = () => rows<{ serial: string; code: string; lineage_entry: string }>('SELECT serial::text, code, lineage_entry FROM items ORDER BY serial');
const transfer = (id: string) => one<TransferRow>(`${TRANSFER_SELECT} WHERE x.id = :id`, { id });
const itemsOf = (id: string) =>
	rows<{ code: string; mass_ug: number }>('SELECT i.code, ti.mass_ug FROM transfer_items ti JOIN items i ON i.id = ti.item_id WHERE ti.transfer_id = :id ORDER BY i.code', { id });

describe('item codes with a slash before the check character (migrations 0090, 0091)', () => {
	it('rewrites stored codes and lineage entries, keeps old signatures verifying, binds dry ice from now on, and undoes', async () => {
		const m = migrator(sq);
		await m.up({ to: '0055-item-lineage-entries.js' });
		await sq.query(`INSERT INTO collections (prefix, name, kind, reserve_fraction, loss_tolerance_ug) VALUES ('CSX', 'Code check', 'laboratory_analogue', 0.5, 1000)`);
		const [lab] = await rows<{ id: string }>(`INSERT INTO labs (name, short_name) VALUES ('Slash Check Lab', 'SCL') RETURNING id`);
		const [user] = await rows<{ id: string }>(`INSERT INTO users (email, name, role) VALUES ('curator@codes.example', 'Code Curator', 'curator') RETURNING id`);
		for (const [serial, parent, depth] of [[1, null, 0], [2, 1, 1], [3, 2, 2]] as const) {
			await sq.query(
				`INSERT INTO items (collection_id, serial, code, parent_id, depth, kind, description, initial_mass_ug, mass_ug)
				 SELECT c.id, :serial, item_code(c.prefix, :serial), (SELECT id FROM items WHERE serial = :parent AND collection_id = c.id), :depth, :kind, 'code check', 1000, 1000
				 FROM collections c WHERE c.prefix = 'CSX'`,
				{ replacements: { serial, parent, depth, kind: parent ? 'aliquot' : 'specimen' } }
			);
		}
		const before = await codes();
		// the database wrote the older form: a hyphen before the same check character
		expect(before.map((i) => i.code)).toEqual([1, 2, 3].map((n) => legacyCode(formatCode('CSX', n))));
		expect(before[0].code).toMatch(/^CSX-00001-[0-9A-Z]$/);

		// a transfer signed before the migration, over its manifest as it was then built: RFC 8785
		// canonical JSON of this layout, with the codes as they were stored
		const [x] = await rows<{ id: string; number: number }>(
			`INSERT INTO transfers (direction, to_lab_id, container, coolant, prepared_by) VALUES ('outbound', :lab, 'vial', 'dry_ice', :by) RETURNING id, number`,
			{ lab: lab.id, by: user.id }
		);
		await sq.query(`INSERT INTO transfer_items (transfer_id, item_id, mass_ug) SELECT :x, id, 1000 FROM items WHERE serial = 3`, { replacements: { x: x.id } });
		const signedManifest = canonicalize({
			transfer: `CT-${String(x.number).padStart(4, '0')}`,
			direction: 'outbound',
			request: null,
			from: { facility: true },
			to: { labId: lab.id },
			items: [{ code: before[2].code, massUg: 1000 }],
			packaging: { container: 'vial', seal: '', atmosphere: '', temperature: '', coolant: 'dry_ice' },
			shipping: { carrier: '', trackingRef: '', expectedArrival: null }
		})!;
		await sq.query(
			`INSERT INTO signatures (transfer_id, signer_id, printed_name, signer_role, meaning, manifest_sha256) VALUES (:x, :u, 'Code Curator', 'curator', 'dispatched', :h)`,
			{ replacements: { x: x.id, u: user.id, h: sha256(signedManifest) } }
		);

		await m.up({ to: '0091-transfer-dry-ice-mass.js' });
		const after = await codes();
		expect(after.map((i) => i.code)).toEqual([1, 2, 3].map((n) => formatCode('CSX', n)));
		expect(after[2].code).toMatch(/^CSX-00003\/[0-9A-Z]$/);
		// each entry quotes its own and its parent's new code
		expect(after.map((i) => JSON.parse(i.lineage_entry + '}')).map((e) => [e.code, e.parentCode])).toEqual([
			[after[0].code, null],
			[after[1].code, after[0].code],
			[after[2].code, after[1].code]
		]);
		// the database's item_code() and src/lib/domain/codes.ts agree on new serials too
		for (const n of [4, 450, 99_999, 123_456]) expect((await one<{ c: string }>(`SELECT item_code('CSX', :n) AS c`, { n })).c).toBe(formatCode('CSX', n));
		// codes stay fixed otherwise
		await expect(sq.query(`UPDATE items SET code = 'CSX-00001-X' WHERE serial = 1`)).rejects.toThrow(/cannot change/);

		// the old signature still verifies: version 1 rebuilds its manifest with the older codes
		const old = await transfer(x.id);
		expect(Number(old.manifest_version)).toBe(1);
		expect(old.dry_ice_net_g).toBeNull();
		expect(manifestOf(old, await itemsOf(x.id))).toBe(signedManifest);
		const [sig] = await rows<{ manifest_sha256: string }>('SELECT manifest_sha256 FROM signatures WHERE transfer_id = :x', { x: x.id });
		expect(sha256(manifestOf(old, await itemsOf(x.id)))).toBe(sig.manifest_sha256);

		// a transfer prepared now: dry ice needs its net mass, other coolants refuse one
		const insert = (coolant: string, grams: number | null) =>
			rows<{ id: string }>(`INSERT INTO transfers (direction, to_lab_id, container, coolant, dry_ice_net_g, prepared_by) VALUES ('outbound', :lab, 'vial', :coolant, :g, :by) RETURNING id`, {
				lab: lab.id, coolant, g: grams, by: user.id
			});
		await expect(insert('dry_ice', null)).rejects.toThrow(/transfers_dry_ice_mass/);
		await expect(insert('none', 2500)).rejects.toThrow(/transfers_dry_ice_mass/);
		await expect(insert('dry_ice', 0)).rejects.toThrow(/check constraint/);
		const [y] = await insert('dry_ice', 2500);
		await sq.query(`INSERT INTO transfer_items (transfer_id, item_id, mass_ug) SELECT :y, id, 1000 FROM items WHERE serial = 3`, { replacements: { y: y.id } });
		const fresh = await transfer(y.id);
		expect(Number(fresh.manifest_version)).toBe(2);
		const manifest = JSON.parse(manifestOf(fresh, await itemsOf(y.id)));
		expect(manifest.items).toEqual([{ code: after[2].code, massUg: 1000 }]);
		expect(manifest.packaging.dryIceNetG).toBe(2500);

		// undo: the older codes come back, and the rewrite runs again
		await m.down({ to: '0090-item-code-check-slash.js' });
		expect((await codes()).map((i) => i.code)).toEqual(before.map((i) => i.code));
		await m.up({ to: '0091-transfer-dry-ice-mass.js' });
		expect((await codes()).map((i) => i.code)).toEqual(after.map((i) => i.code));
	});
});
