// A version number per collection that changes, in the same transaction, with every change to any
// of its items (they and their whole trees share the collection) and with any lab's name (shown as
// holder). A lineage computed in a snapshot that reads version v is the same for every snapshot
// that reads v, so the app keeps computed lineages and serves one again while the version is still
// v. Writers lock the collection's row to bump it, so versions follow commit order.
export async function up({ sequelize }) {
	await sequelize.query(`
		ALTER TABLE collections ADD COLUMN lineage_version bigint NOT NULL DEFAULT 0;

		-- once per collection and transaction is enough: the collections bumped so far are kept in a
		-- transaction-local setting, so a split's two children and its parent cost one UPDATE
		CREATE FUNCTION bump_lineage_version() RETURNS trigger LANGUAGE plpgsql AS $$
		DECLARE
			done text := coalesce(current_setting('regolog.lineage_bumped', true), '');
		BEGIN
			IF strpos(done, NEW.collection_id::text) = 0 THEN
				UPDATE collections SET lineage_version = lineage_version + 1 WHERE id = NEW.collection_id;
				PERFORM set_config('regolog.lineage_bumped', done || NEW.collection_id::text || ' ', true);
			END IF;
			RETURN NULL;
		END $$;
		CREATE TRIGGER items_lineage_version AFTER INSERT OR UPDATE ON items
			FOR EACH ROW EXECUTE FUNCTION bump_lineage_version();

		CREATE FUNCTION bump_every_lineage_version() RETURNS trigger LANGUAGE plpgsql AS $$
		BEGIN
			PERFORM 1 FROM collections ORDER BY id FOR UPDATE;
			UPDATE collections SET lineage_version = lineage_version + 1;
			RETURN NULL;
		END $$;
		CREATE TRIGGER labs_lineage_rename AFTER UPDATE OF name ON labs
			FOR EACH STATEMENT EXECUTE FUNCTION bump_every_lineage_version();
	`);
}

export async function down({ sequelize }) {
	await sequelize.query(`
		DROP TRIGGER labs_lineage_rename ON labs;
		DROP TRIGGER items_lineage_version ON items;
		DROP FUNCTION bump_every_lineage_version(), bump_lineage_version();
		ALTER TABLE collections DROP COLUMN lineage_version;
	`);
}
