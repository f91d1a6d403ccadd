// Each item knows the root of its tree (root_id: the parent specimen, or the item itself for a root),
// and the tree is indexed level by level: (root_id, depth, parent_id). The lineage's recursive query
// then reads a tree one level per step, each level as one range of that index joined by hash with
// the level above, instead of one index descent per item (migration 0010's items_parent_idx, which
// now keeps parent_id alone for children counts and the foreign key).
//
// root_id is set by the database on every insert, from the parent row, and like the rest of an
// item's identity (migration 0010's items_identity_fixed) it never changes afterwards. A child's depth must be its parent's depth + 1: the
// level walk relies on it, so the same trigger refuses anything else. Codes are letters, digits and
// hyphens (PREFIX-NNNNN-C), so they go into the lineage's JSON text as they are.
export async function up({ sequelize }) {
	await sequelize.query(`
		DO $$
		DECLARE
			bad text;
		BEGIN
			SELECT c.code INTO bad FROM items c JOIN items p ON p.id = c.parent_id WHERE c.depth <> p.depth + 1 LIMIT 1;
			IF FOUND THEN
				RAISE EXCEPTION 'item %: its depth is not its parent''s depth + 1', bad;
			END IF;
		END $$;

		ALTER TABLE items ADD COLUMN root_id uuid;
		WITH RECURSIVE t AS (
			SELECT id, id AS root FROM items WHERE parent_id IS NULL
			UNION ALL
			SELECT c.id, t.root FROM items c JOIN t ON c.parent_id = t.id
		)
		UPDATE items i SET root_id = t.root FROM t WHERE t.id = i.id;
		ALTER TABLE items ALTER COLUMN root_id SET NOT NULL,
			ADD CONSTRAINT items_code_characters CHECK (code ~ '^[A-Z0-9-]+$');

		CREATE FUNCTION set_item_root() RETURNS trigger LANGUAGE plpgsql AS $$
		DECLARE
			parent_depth integer;
		BEGIN
			IF NEW.parent_id IS NULL THEN
				NEW.root_id := NEW.id;
				RETURN NEW;
			END IF;
			SELECT p.root_id, p.depth INTO NEW.root_id, parent_depth FROM items p WHERE p.id = NEW.parent_id;
			IF NOT FOUND THEN
				RAISE EXCEPTION 'item %: its parent % does not exist', NEW.code, NEW.parent_id USING ERRCODE = 'foreign_key_violation';
			END IF;
			IF NEW.depth <> parent_depth + 1 THEN
				RAISE EXCEPTION 'item %: depth % under a parent at depth %', NEW.code, NEW.depth, parent_depth USING ERRCODE = 'check_violation';
			END IF;
			RETURN NEW;
		END $$;
		CREATE TRIGGER items_tree_root BEFORE INSERT ON items FOR EACH ROW EXECUTE FUNCTION set_item_root();

		CREATE FUNCTION refuse_item_root_change() RETURNS trigger LANGUAGE plpgsql AS $$
		BEGIN
			IF NEW.root_id <> OLD.root_id THEN
				RAISE EXCEPTION 'item %: the tree it belongs to cannot change', OLD.code USING ERRCODE = 'insufficient_privilege';
			END IF;
			RETURN NEW;
		END $$;
		CREATE TRIGGER items_root_fixed BEFORE UPDATE OF root_id ON items FOR EACH ROW EXECUTE FUNCTION refuse_item_root_change();

		CREATE INDEX items_tree_level_idx ON items (root_id, depth, parent_id)
			INCLUDE (id, code, serial, kind, state, mass_ug, initial_mass_ug, holder_lab_id);
		DROP INDEX items_parent_idx;
		CREATE INDEX items_parent_idx ON items (parent_id);
		ANALYZE items;
	`);
}

export async function down({ sequelize }) {
	await sequelize.query(`
		DROP INDEX items_parent_idx;
		CREATE INDEX items_parent_idx ON items (parent_id) INCLUDE (id, code, serial, kind, state, mass_ug, initial_mass_ug, holder_lab_id);
		DROP INDEX items_tree_level_idx;
		DROP TRIGGER items_root_fixed ON items;
		DROP FUNCTION refuse_item_root_change();
		DROP TRIGGER items_tree_root ON items;
		DROP FUNCTION set_item_root();
		ALTER TABLE items DROP CONSTRAINT items_code_characters, DROP COLUMN root_id;
	`);
}
