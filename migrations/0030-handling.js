// Handling sessions: periods in which items were out of their sealed containers, with the
// atmosphere, conditions, operator, the contact materials and tools used (from a catalogue per
// collection), the items handled and the blanks exposed alongside. Sessions and their lists are
// append-only. A split may name the session it happened in; a split recorded without one may have
// one attached later, once (NULL → a session), and nothing else about a split can change.
export async function up({ sequelize }) {
	await sequelize.query(`
		CREATE EXTENSION IF NOT EXISTS btree_gist;

		CREATE TABLE contact_catalogue (
			id            uuid PRIMARY KEY DEFAULT gen_random_uuid(),
			collection_id uuid NOT NULL REFERENCES collections (id),
			name          text NOT NULL CHECK (length(name) BETWEEN 2 AND 120),
			kind          text NOT NULL CHECK (kind IN ('material', 'tool')),
			-- what touches the material; checked against the collection's allowed_contact_materials
			material      text NOT NULL CHECK (length(material) BETWEEN 1 AND 120),
			description   text NOT NULL DEFAULT '' CHECK (length(description) <= 500),
			created_at    timestamptz NOT NULL DEFAULT now()
		);
		CREATE UNIQUE INDEX contact_catalogue_name_key ON contact_catalogue (collection_id, lower(name));

		CREATE TABLE handling_sessions (
			id            uuid PRIMARY KEY DEFAULT gen_random_uuid(),
			collection_id uuid NOT NULL REFERENCES collections (id),
			atmosphere    text NOT NULL CHECK (atmosphere IN ('nitrogen_glovebox', 'argon_glovebox', 'cleanroom_air', 'ambient_air', 'vacuum')),
			started_at    timestamptz NOT NULL,
			ended_at      timestamptz NOT NULL,
			temperature_c numeric(6, 2) CHECK (temperature_c BETWEEN -273.15 AND 200),
			humidity_pct  numeric(5, 2) CHECK (humidity_pct BETWEEN 0 AND 100),
			operator_id   uuid NOT NULL REFERENCES users (id),
			purpose       text NOT NULL CHECK (length(trim(purpose)) BETWEEN 1 AND 500),
			notes         text NOT NULL DEFAULT '' CHECK (length(notes) <= 2000),
			recorded_by   uuid REFERENCES users (id),
			recorded_at   timestamptz NOT NULL DEFAULT now(),
			CONSTRAINT handling_sessions_order CHECK (ended_at > started_at)
		);
		CREATE INDEX handling_sessions_start_idx ON handling_sessions (started_at);

		-- one item out in one session; the session's period is repeated here so that the database
		-- itself refuses two overlapping sessions for one item
		CREATE TABLE handling_session_items (
			session_id uuid NOT NULL REFERENCES handling_sessions (id),
			item_id    uuid NOT NULL REFERENCES items (id),
			during     tstzrange NOT NULL,
			PRIMARY KEY (session_id, item_id),
			CONSTRAINT handling_no_overlap EXCLUDE USING gist (item_id WITH =, during WITH &&)
		);
		CREATE INDEX handling_session_items_item_idx ON handling_session_items (item_id);

		CREATE TABLE handling_session_contacts (
			session_id uuid NOT NULL REFERENCES handling_sessions (id),
			contact_id uuid NOT NULL REFERENCES contact_catalogue (id),
			PRIMARY KEY (session_id, contact_id)
		);

		CREATE TABLE handling_session_blanks (
			session_id    uuid NOT NULL REFERENCES handling_sessions (id),
			blank_item_id uuid NOT NULL REFERENCES items (id),
			PRIMARY KEY (session_id, blank_item_id)
		);
		CREATE INDEX handling_session_blanks_item_idx ON handling_session_blanks (blank_item_id);

		-- an analysis of a blank is on record (a blank-control report or a document refers to it)
		CREATE TABLE blank_analyses (
			id            uuid PRIMARY KEY DEFAULT gen_random_uuid(),
			blank_item_id uuid NOT NULL REFERENCES items (id),
			summary       text NOT NULL CHECK (length(trim(summary)) BETWEEN 1 AND 500),
			recorded_by   uuid REFERENCES users (id),
			recorded_at   timestamptz NOT NULL DEFAULT now()
		);
		CREATE INDEX blank_analyses_item_idx ON blank_analyses (blank_item_id);

		CREATE TRIGGER handling_sessions_append_only BEFORE UPDATE OR DELETE ON handling_sessions
			FOR EACH ROW EXECUTE FUNCTION refuse_record_change();
		CREATE TRIGGER handling_session_items_append_only BEFORE UPDATE OR DELETE ON handling_session_items
			FOR EACH ROW EXECUTE FUNCTION refuse_record_change();
		CREATE TRIGGER handling_session_contacts_append_only BEFORE UPDATE OR DELETE ON handling_session_contacts
			FOR EACH ROW EXECUTE FUNCTION refuse_record_change();
		CREATE TRIGGER handling_session_blanks_append_only BEFORE UPDATE OR DELETE ON handling_session_blanks
			FOR EACH ROW EXECUTE FUNCTION refuse_record_change();
		CREATE TRIGGER blank_analyses_append_only BEFORE UPDATE OR DELETE ON blank_analyses
			FOR EACH ROW EXECUTE FUNCTION refuse_record_change();
		CREATE TRIGGER contact_catalogue_no_delete BEFORE DELETE ON contact_catalogue
			FOR EACH ROW EXECUTE FUNCTION refuse_record_change();

		ALTER TABLE splits ADD COLUMN handling_session_id uuid REFERENCES handling_sessions (id);
		CREATE INDEX splits_session_idx ON splits (handling_session_id);

		-- splits stay append-only, except that a missing session may be attached once
		CREATE FUNCTION refuse_split_change() RETURNS trigger LANGUAGE plpgsql AS $$
		BEGIN
			IF TG_OP = 'UPDATE' AND OLD.handling_session_id IS NULL AND NEW.handling_session_id IS NOT NULL
			   AND (to_jsonb(NEW) - 'handling_session_id') = (to_jsonb(OLD) - 'handling_session_id') THEN
				RETURN NEW;
			END IF;
			RAISE EXCEPTION 'splits is append-only: % refused (only a missing handling session may be attached)', TG_OP
				USING ERRCODE = 'insufficient_privilege';
		END $$;
		DROP TRIGGER splits_append_only ON splits;
		CREATE TRIGGER splits_append_only BEFORE UPDATE OR DELETE ON splits
			FOR EACH ROW EXECUTE FUNCTION refuse_split_change();
	`);
}

export async function down({ sequelize }) {
	await sequelize.query(`
		DROP TRIGGER splits_append_only ON splits;
		CREATE TRIGGER splits_append_only BEFORE UPDATE OR DELETE ON splits FOR EACH ROW EXECUTE FUNCTION refuse_record_change();
		DROP FUNCTION refuse_split_change();
		ALTER TABLE splits DROP COLUMN handling_session_id;
		DROP TABLE blank_analyses, handling_session_blanks, handling_session_contacts, handling_session_items, handling_sessions, contact_catalogue;
	`);
}
