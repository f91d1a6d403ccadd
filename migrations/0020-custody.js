// Allocation requests, custody transfers with signatures, and usage reports.
export async function up({ sequelize }) {
	await sequelize.query(`
		CREATE SEQUENCE allocation_request_number;
		CREATE TABLE allocation_requests (
			id               uuid PRIMARY KEY DEFAULT gen_random_uuid(),
			number           integer NOT NULL UNIQUE DEFAULT nextval('allocation_request_number'),
			lab_id           uuid NOT NULL REFERENCES labs (id),
			requested_by     uuid NOT NULL REFERENCES users (id),
			collection_id    uuid NOT NULL REFERENCES collections (id),
			mass_ug          bigint NOT NULL CHECK (mass_ug > 0),
			analysis_plan    text NOT NULL DEFAULT '' CHECK (length(analysis_plan) <= 4000),
			techniques       text[] NOT NULL DEFAULT '{}',
			destructive      boolean NOT NULL,
			expected_consumption_ug bigint NOT NULL DEFAULT 0 CHECK (expected_consumption_ug >= 0),
			return_plan      text NOT NULL DEFAULT '' CHECK (length(return_plan) <= 2000),
			justification    text NOT NULL DEFAULT '' CHECK (length(justification) <= 4000),
			state            text NOT NULL DEFAULT 'draft'
			                 CHECK (state IN ('draft', 'submitted', 'in_review', 'granted', 'declined', 'fulfilled', 'closed', 'withdrawn')),
			granted_ug       bigint CHECK (granted_ug > 0),
			decided_by       uuid REFERENCES users (id),
			decided_at       timestamptz,
			decision_note    text CHECK (length(decision_note) <= 2000),
			reserve_override_by uuid REFERENCES users (id),
			reserve_override_reason text CHECK (length(reserve_override_reason) <= 2000),
			submitted_at     timestamptz,
			fulfilled_at     timestamptz,
			usage_due_at     timestamptz,
			usage_reminded_at timestamptz,
			created_at       timestamptz NOT NULL DEFAULT now(),
			updated_at       timestamptz NOT NULL DEFAULT now(),
			CONSTRAINT requests_grant CHECK (state NOT IN ('granted', 'fulfilled', 'closed') OR granted_ug IS NOT NULL),
			CONSTRAINT requests_grant_not_more CHECK (granted_ug IS NULL OR granted_ug <= mass_ug)
		);
		CREATE INDEX allocation_requests_lab_idx ON allocation_requests (lab_id, state);
		CREATE INDEX allocation_requests_state_idx ON allocation_requests (state, submitted_at);

		-- The aliquots set aside (earmarked) for a granted request.
		CREATE TABLE allocation_items (
			request_id uuid NOT NULL REFERENCES allocation_requests (id),
			item_id    uuid NOT NULL REFERENCES items (id) UNIQUE,
			mass_ug    bigint NOT NULL CHECK (mass_ug > 0),
			added_by   uuid REFERENCES users (id),
			added_at   timestamptz NOT NULL DEFAULT now(),
			PRIMARY KEY (request_id, item_id)
		);

		CREATE SEQUENCE transfer_number;
		CREATE TABLE transfers (
			id              uuid PRIMARY KEY DEFAULT gen_random_uuid(),
			number          integer NOT NULL UNIQUE DEFAULT nextval('transfer_number'),
			direction       text NOT NULL CHECK (direction IN ('outbound', 'return')),
			request_id      uuid REFERENCES allocation_requests (id),
			-- null: the facility
			from_lab_id     uuid REFERENCES labs (id),
			to_lab_id       uuid REFERENCES labs (id),
			state           text NOT NULL DEFAULT 'prepared' CHECK (state IN ('prepared', 'dispatched', 'received', 'refused', 'cancelled')),
			container       text NOT NULL DEFAULT '' CHECK (length(container) <= 200),
			seal            text NOT NULL DEFAULT '' CHECK (length(seal) <= 120),
			atmosphere      text NOT NULL DEFAULT '' CHECK (length(atmosphere) <= 80),
			temperature     text NOT NULL DEFAULT '' CHECK (length(temperature) <= 80),
			coolant         text NOT NULL DEFAULT 'none' CHECK (coolant IN ('none', 'cold_packs', 'dry_ice', 'dry_shipper')),
			carrier         text NOT NULL DEFAULT '' CHECK (length(carrier) <= 120),
			tracking_ref    text NOT NULL DEFAULT '' CHECK (length(tracking_ref) <= 120),
			expected_arrival date,
			note            text NOT NULL DEFAULT '' CHECK (length(note) <= 2000),
			prepared_by     uuid NOT NULL REFERENCES users (id),
			refused_returned_at timestamptz,
			created_at      timestamptz NOT NULL DEFAULT now(),
			updated_at      timestamptz NOT NULL DEFAULT now(),
			CONSTRAINT transfers_ends CHECK ((from_lab_id IS NULL) <> (to_lab_id IS NULL)),
			CONSTRAINT transfers_direction CHECK ((direction = 'outbound') = (from_lab_id IS NULL))
		);
		CREATE INDEX transfers_to_idx ON transfers (to_lab_id, state);
		CREATE INDEX transfers_from_idx ON transfers (from_lab_id, state);

		CREATE TABLE transfer_items (
			transfer_id uuid NOT NULL REFERENCES transfers (id),
			item_id     uuid NOT NULL REFERENCES items (id),
			mass_ug     bigint NOT NULL CHECK (mass_ug >= 0),
			PRIMARY KEY (transfer_id, item_id)
		);
		CREATE INDEX transfer_items_item_idx ON transfer_items (item_id);

		-- Electronic signatures: who, as what, meaning what, when, over which manifest.
		CREATE TABLE signatures (
			id             uuid PRIMARY KEY DEFAULT gen_random_uuid(),
			transfer_id    uuid NOT NULL REFERENCES transfers (id),
			signer_id      uuid NOT NULL REFERENCES users (id),
			printed_name   text NOT NULL,
			signer_role    text NOT NULL,
			signer_lab_id  uuid REFERENCES labs (id),
			meaning        text NOT NULL CHECK (meaning IN ('dispatched', 'received_intact', 'received_damaged', 'refused', 'returned_to_sender')),
			note           text NOT NULL DEFAULT '' CHECK (length(note) <= 2000),
			manifest_sha256 char(64) NOT NULL,
			signed_at      timestamptz NOT NULL DEFAULT now()
		);
		CREATE INDEX signatures_transfer_idx ON signatures (transfer_id, signed_at);
		-- One receipt (received or refused) per transfer, one dispatch.
		CREATE UNIQUE INDEX signatures_one_receipt ON signatures (transfer_id) WHERE meaning IN ('received_intact', 'received_damaged', 'refused');
		CREATE UNIQUE INDEX signatures_one_dispatch ON signatures (transfer_id) WHERE meaning = 'dispatched';
		CREATE TRIGGER signatures_append_only BEFORE UPDATE OR DELETE ON signatures
			FOR EACH ROW EXECUTE FUNCTION refuse_record_change();

		CREATE TABLE usage_reports (
			id            uuid PRIMARY KEY DEFAULT gen_random_uuid(),
			request_id    uuid NOT NULL REFERENCES allocation_requests (id),
			lab_id        uuid NOT NULL REFERENCES labs (id),
			item_id       uuid NOT NULL REFERENCES items (id) UNIQUE,
			allocated_ug  bigint NOT NULL CHECK (allocated_ug >= 0),
			consumed_ug   bigint NOT NULL CHECK (consumed_ug >= 0),
			returned_ug   bigint NOT NULL CHECK (returned_ug >= 0),
			lost_ug       bigint NOT NULL CHECK (lost_ug >= 0),
			gap_ug        bigint NOT NULL,
			tolerance_ug  bigint NOT NULL CHECK (tolerance_ug >= 0),
			gap_flagged   boolean NOT NULL,
			results_summary text NOT NULL DEFAULT '' CHECK (length(results_summary) <= 8000),
			submitted_by  uuid NOT NULL REFERENCES users (id),
			submitted_at  timestamptz NOT NULL DEFAULT now(),
			CONSTRAINT usage_gap CHECK (gap_ug = allocated_ug - consumed_ug - returned_ug - lost_ug)
		);
		CREATE TRIGGER usage_reports_append_only BEFORE UPDATE OR DELETE ON usage_reports
			FOR EACH ROW EXECUTE FUNCTION refuse_record_change();

		ALTER TABLE ledger_entries DROP CONSTRAINT ledger_entries_kind_check;
		ALTER TABLE ledger_entries ADD CONSTRAINT ledger_entries_kind_check
			CHECK (kind IN ('registered', 'split_in', 'split_out', 'split_loss', 'reweighed', 'consumed', 'lost_in_use', 'usage_gap'));
	`);
}

export async function down({ sequelize }) {
	await sequelize.query(`
		DROP TABLE usage_reports, signatures, transfer_items, transfers, allocation_items, allocation_requests;
		DROP SEQUENCE transfer_number, allocation_request_number;
	`);
}
