// Each item carries its own lineage entry, kept by the database: the JSON text the lineage shows for
// it (code, parent's code, kind, state, mass, initial mass, holder, number of children), all but the
// closing level, which depends on where the lineage starts. The lineage then joins stored texts
// level by level instead of putting ten pieces together per item on every request.
//
// - child_count: the number of children, raised after every INSERT of items by one UPDATE per
//   parent (a statement trigger over the inserted rows, so a split's children cost one UPDATE of
//   their parent, and a child inserted by any path is counted). Items are never deleted and never
//   change parent, so the count only grows; it cannot be changed by hand.
// - lineage_entry: written before every INSERT and UPDATE of an item from the row itself, its
//   parent's code and its holder lab's name, so it can never disagree with the columns it shows;
//   a lab's new name is written into the entries of the items it holds.
// - items_tree_level_idx (migration 0054) is now keyed (root_id, depth, serial) and covers the
//   entry: a level, or a whole tree level by level, is read from the index in the lineage's order.
export async function up({ sequelize }) {
	await sequelize.query(`
		ALTER TABLE items ADD COLUMN child_count integer NOT NULL DEFAULT 0 CHECK (child_count >= 0),
			ADD COLUMN lineage_entry text;

		CREATE FUNCTION set_item_lineage_entry() RETURNS trigger LANGUAGE plpgsql AS $$
		BEGIN
			IF TG_OP = 'UPDATE' AND NEW.child_count <> OLD.child_count AND pg_trigger_depth() < 2 THEN
				RAISE EXCEPTION 'item %: its number of children is counted by the database and cannot be set', OLD.code
					USING ERRCODE = 'insufficient_privilege';
			END IF;
			NEW.lineage_entry := '{"code":"' || NEW.code ||
				'","parentCode":' || coalesce('"' || (SELECT p.code FROM items p WHERE p.id = NEW.parent_id) || '"', 'null') ||
				',"kind":"' || NEW.kind || '","state":"' || NEW.state || '","massUg":' || NEW.mass_ug ||
				',"initialMassUg":' || NEW.initial_mass_ug ||
				',"holder":' || coalesce((SELECT to_json(l.name)::text FROM labs l WHERE l.id = NEW.holder_lab_id), '"Facility"') ||
				',"children":' || NEW.child_count;
			RETURN NEW;
		END $$;

		CREATE FUNCTION count_item_children() RETURNS trigger LANGUAGE plpgsql AS $$
		BEGIN
			UPDATE items p SET child_count = p.child_count + n.n
			FROM (SELECT parent_id, count(*)::integer AS n FROM inserted_items WHERE parent_id IS NOT NULL GROUP BY parent_id) n
			WHERE p.id = n.parent_id;
			RETURN NULL;
		END $$;

		CREATE FUNCTION rewrite_lab_lineage_entries() RETURNS trigger LANGUAGE plpgsql AS $$
		BEGIN
			IF NEW.name IS DISTINCT FROM OLD.name THEN
				UPDATE items SET lineage_entry = NULL WHERE holder_lab_id = NEW.id;
			END IF;
			RETURN NULL;
		END $$;

		UPDATE items i SET child_count = k.n
		FROM (SELECT parent_id, count(*)::integer AS n FROM items WHERE parent_id IS NOT NULL GROUP BY parent_id) k
		WHERE i.id = k.parent_id;

		CREATE TRIGGER items_lineage_entry BEFORE INSERT OR UPDATE ON items
			FOR EACH ROW EXECUTE FUNCTION set_item_lineage_entry();
		-- every existing row's entry, written by the trigger above
		UPDATE items SET lineage_entry = NULL;
		ALTER TABLE items ALTER COLUMN lineage_entry SET NOT NULL;

		CREATE TRIGGER items_child_count AFTER INSERT ON items REFERENCING NEW TABLE AS inserted_items
			FOR EACH STATEMENT EXECUTE FUNCTION count_item_children();
		CREATE TRIGGER labs_lineage_entries AFTER UPDATE OF name ON labs
			FOR EACH ROW EXECUTE FUNCTION rewrite_lab_lineage_entries();

		DROP INDEX items_tree_level_idx;
		CREATE INDEX items_tree_level_idx ON items (root_id, depth, serial) INCLUDE (id, parent_id, holder_lab_id, lineage_entry);
		ANALYZE items;
	`);
}

export async function down({ sequelize }) {
	await sequelize.query(`
		DROP INDEX items_tree_level_idx;
		CREATE INDEX items_tree_level_idx ON items (root_id, depth, parent_id)
			INCLUDE (id, code, serial, kind, state, mass_ug, initial_mass_ug, holder_lab_id);
		DROP TRIGGER labs_lineage_entries ON labs;
		DROP TRIGGER items_child_count ON items;
		DROP TRIGGER items_lineage_entry ON items;
		DROP FUNCTION rewrite_lab_lineage_entries(), count_item_children(), set_item_lineage_entry();
		ALTER TABLE items DROP COLUMN lineage_entry, DROP COLUMN child_count;
	`);
}
