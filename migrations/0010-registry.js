// The specimen registry: collections and their handling rules, balances, items (a tree of
// specimens, aliquots and blanks), weighings, splits and the per-item mass ledger.
// Masses are bigint micrograms, never negative. Weighings, splits and ledger entries are
// append-only: the database refuses UPDATE and DELETE on them.
export async function up({ sequelize }) {
	await sequelize.query(`
		CREATE TABLE collections (
			id                 uuid PRIMARY KEY DEFAULT gen_random_uuid(),
			prefix             text NOT NULL UNIQUE CHECK (prefix ~ '^[A-Z]{2,5}$'),
			name               text NOT NULL CHECK (length(name) BETWEEN 2 AND 160),
			kind               text NOT NULL CHECK (kind IN ('sample_return', 'meteorite', 'laboratory_analogue')),
			description        text NOT NULL DEFAULT '' CHECK (length(description) <= 2000),
			allowed_atmospheres text[] NOT NULL DEFAULT '{}',
			allowed_contact_materials text[] NOT NULL DEFAULT '{}',
			-- null: no limit; 0: no ambient-air exposure at all
			max_air_exposure_min integer CHECK (max_air_exposure_min >= 0),
			reserve_fraction   numeric(6, 5) NOT NULL CHECK (reserve_fraction >= 0 AND reserve_fraction <= 1),
			-- the loss tolerance of a split: either a mass or a fraction of the parent before
			loss_tolerance_ug  bigint CHECK (loss_tolerance_ug >= 0),
			loss_tolerance_fraction numeric(7, 6) CHECK (loss_tolerance_fraction >= 0 AND loss_tolerance_fraction <= 1),
			next_serial        bigint NOT NULL DEFAULT 1 CHECK (next_serial >= 1),
			created_at         timestamptz NOT NULL DEFAULT now(),
			updated_at         timestamptz NOT NULL DEFAULT now(),
			CONSTRAINT collections_one_tolerance CHECK ((loss_tolerance_ug IS NULL) <> (loss_tolerance_fraction IS NULL))
		);

		CREATE TABLE balances (
			id               uuid PRIMARY KEY DEFAULT gen_random_uuid(),
			name             text NOT NULL CHECK (length(name) BETWEEN 2 AND 80),
			model            text NOT NULL DEFAULT '' CHECK (length(model) <= 120),
			location         text NOT NULL DEFAULT '' CHECK (length(location) <= 120),
			readability_ug   numeric(12, 4) NOT NULL CHECK (readability_ug > 0),
			repeatability_ug numeric(12, 4) NOT NULL CHECK (repeatability_ug >= 0),
			calibration_due  date NOT NULL,
			active           boolean NOT NULL DEFAULT true,
			created_at       timestamptz NOT NULL DEFAULT now(),
			updated_at       timestamptz NOT NULL DEFAULT now()
		);
		CREATE UNIQUE INDEX balances_name_key ON balances (lower(name));

		CREATE TABLE items (
			id              uuid PRIMARY KEY DEFAULT gen_random_uuid(),
			collection_id   uuid NOT NULL REFERENCES collections (id),
			serial          bigint NOT NULL CHECK (serial >= 1),
			code            text NOT NULL UNIQUE,
			parent_id       uuid REFERENCES items (id),
			depth           integer NOT NULL CHECK (depth >= 0),
			kind            text NOT NULL CHECK (kind IN ('specimen', 'aliquot', 'blank')),
			description     text NOT NULL DEFAULT '' CHECK (length(description) <= 2000),
			initial_mass_ug bigint NOT NULL CHECK (initial_mass_ug >= 0),
			mass_ug         bigint NOT NULL CHECK (mass_ug >= 0),
			-- standard uncertainty of the recorded mass, µg; null when it was never weighed here
			mass_u_ug       double precision CHECK (mass_u_ug >= 0),
			state           text NOT NULL DEFAULT 'stored'
			                CHECK (state IN ('stored', 'earmarked', 'in_transit', 'on_loan', 'consumed', 'lost')),
			-- null: held by the facility
			holder_lab_id   uuid REFERENCES labs (id),
			container       text NOT NULL DEFAULT '' CHECK (length(container) <= 200),
			storage_place   text NOT NULL DEFAULT '' CHECK (length(storage_place) <= 200),
			provenance      text NOT NULL DEFAULT '' CHECK (length(provenance) <= 2000),
			created_by      uuid REFERENCES users (id),
			created_at      timestamptz NOT NULL DEFAULT now(),
			updated_at      timestamptz NOT NULL DEFAULT now(),
			UNIQUE (collection_id, serial),
			CONSTRAINT items_tree_kind CHECK (
				(kind = 'specimen' AND parent_id IS NULL AND depth = 0) OR
				(kind = 'aliquot' AND parent_id IS NOT NULL AND depth > 0) OR
				(kind = 'blank' AND (parent_id IS NULL) = (depth = 0))
			)
		);
		-- the lineage walks the tree by parent; the included columns let it read the index alone
		CREATE INDEX items_parent_idx ON items (parent_id) INCLUDE (id, code, serial, kind, state, mass_ug, initial_mass_ug, holder_lab_id);
		CREATE INDEX items_holder_idx ON items (holder_lab_id);
		CREATE INDEX items_collection_serial_idx ON items (collection_id, serial);
		CREATE INDEX items_mass_idx ON items (mass_ug, id);
		CREATE INDEX items_created_idx ON items (created_at, id);

		CREATE TABLE splits (
			id                uuid PRIMARY KEY DEFAULT gen_random_uuid(),
			parent_id         uuid NOT NULL REFERENCES items (id),
			balance_id        uuid REFERENCES balances (id),
			parent_before_ug  bigint NOT NULL CHECK (parent_before_ug > 0),
			parent_after_ug   bigint NOT NULL CHECK (parent_after_ug >= 0),
			children_total_ug bigint NOT NULL CHECK (children_total_ug > 0),
			loss_ug           bigint NOT NULL,
			loss_u_ug         double precision NOT NULL CHECK (loss_u_ug >= 0),
			reweighed         boolean NOT NULL,
			verdict           text NOT NULL CHECK (verdict IN ('ok', 'needs-reason')),
			reason            text CHECK (length(reason) <= 2000),
			operator_id       uuid REFERENCES users (id),
			at                timestamptz NOT NULL DEFAULT now(),
			CONSTRAINT splits_balance CHECK (parent_before_ug = parent_after_ug + children_total_ug + loss_ug),
			CONSTRAINT splits_reason CHECK (verdict = 'ok' OR length(trim(reason)) > 0)
		);
		CREATE INDEX splits_parent_idx ON splits (parent_id, at);

		ALTER TABLE items ADD COLUMN split_id uuid REFERENCES splits (id);

		CREATE TABLE weighings (
			id           uuid PRIMARY KEY DEFAULT gen_random_uuid(),
			item_id      uuid NOT NULL REFERENCES items (id),
			balance_id   uuid NOT NULL REFERENCES balances (id),
			purpose      text NOT NULL CHECK (purpose IN ('registration', 'split_child', 'split_parent_after', 'check')),
			gross_ug     bigint NOT NULL CHECK (gross_ug >= 0),
			tare_ug      bigint NOT NULL CHECK (tare_ug >= 0),
			net_ug       bigint NOT NULL CHECK (net_ug >= 0),
			u_ug         double precision NOT NULL CHECK (u_ug >= 0),
			expanded_ug  double precision NOT NULL CHECK (expanded_ug >= 0),
			minimum_weight_ug bigint NOT NULL CHECK (minimum_weight_ug >= 0),
			below_minimum boolean NOT NULL,
			reason       text CHECK (length(reason) <= 2000),
			split_id     uuid REFERENCES splits (id),
			operator_id  uuid REFERENCES users (id),
			at           timestamptz NOT NULL DEFAULT now(),
			CONSTRAINT weighings_net CHECK (net_ug = gross_ug - tare_ug),
			CONSTRAINT weighings_minimum CHECK (below_minimum = (net_ug < minimum_weight_ug)),
			CONSTRAINT weighings_reason CHECK (NOT below_minimum OR length(trim(reason)) > 0)
		);
		CREATE INDEX weighings_item_idx ON weighings (item_id, at);

		CREATE TABLE ledger_entries (
			id               bigserial PRIMARY KEY,
			item_id          uuid NOT NULL REFERENCES items (id),
			seq              integer NOT NULL CHECK (seq >= 1),
			kind             text NOT NULL CHECK (kind IN ('registered', 'split_in', 'split_out', 'split_loss', 'reweighed')),
			delta_ug         bigint NOT NULL,
			balance_after_ug bigint NOT NULL CHECK (balance_after_ug >= 0),
			u_after_ug       double precision CHECK (u_after_ug >= 0),
			split_id         uuid REFERENCES splits (id),
			weighing_id      uuid REFERENCES weighings (id),
			counterpart_id   uuid REFERENCES items (id),
			note             text NOT NULL DEFAULT '' CHECK (length(note) <= 2000),
			actor_id         uuid REFERENCES users (id),
			at               timestamptz NOT NULL DEFAULT now(),
			UNIQUE (item_id, seq)
		);
		CREATE INDEX ledger_split_idx ON ledger_entries (split_id);

		CREATE FUNCTION refuse_record_change() RETURNS trigger LANGUAGE plpgsql AS $$
		BEGIN
			RAISE EXCEPTION '% is append-only: % refused', TG_TABLE_NAME, TG_OP USING ERRCODE = 'insufficient_privilege';
		END $$;
		CREATE TRIGGER splits_append_only BEFORE UPDATE OR DELETE ON splits
			FOR EACH ROW EXECUTE FUNCTION refuse_record_change();
		CREATE TRIGGER weighings_append_only BEFORE UPDATE OR DELETE ON weighings
			FOR EACH ROW EXECUTE FUNCTION refuse_record_change();
		CREATE TRIGGER ledger_append_only BEFORE UPDATE OR DELETE ON ledger_entries
			FOR EACH ROW EXECUTE FUNCTION refuse_record_change();
		CREATE TRIGGER items_no_delete BEFORE DELETE ON items
			FOR EACH ROW EXECUTE FUNCTION refuse_record_change();
		-- an item's identity, origin and initial mass never change once recorded
		CREATE FUNCTION refuse_item_identity_change() RETURNS trigger LANGUAGE plpgsql AS $$
		BEGIN
			IF NEW.code <> OLD.code OR NEW.serial <> OLD.serial OR NEW.collection_id <> OLD.collection_id
			   OR NEW.parent_id IS DISTINCT FROM OLD.parent_id OR NEW.depth <> OLD.depth OR NEW.kind <> OLD.kind
			   OR NEW.initial_mass_ug <> OLD.initial_mass_ug OR NEW.split_id IS DISTINCT FROM OLD.split_id THEN
				RAISE EXCEPTION 'item %: code, origin, kind and initial mass cannot change', OLD.code USING ERRCODE = 'insufficient_privilege';
			END IF;
			RETURN NEW;
		END $$;
		CREATE TRIGGER items_identity_fixed BEFORE UPDATE ON items
			FOR EACH ROW EXECUTE FUNCTION refuse_item_identity_change();
		CREATE TRIGGER registry_no_truncate BEFORE TRUNCATE ON ledger_entries
			FOR EACH STATEMENT EXECUTE FUNCTION refuse_record_change();
	`);
}

export async function down({ sequelize }) {
	await sequelize.query(`
		DROP TABLE ledger_entries, weighings;
		ALTER TABLE items DROP COLUMN split_id;
		DROP TABLE splits, items, balances, collections;
		DROP FUNCTION refuse_record_change(), refuse_item_identity_change();
	`);
}
