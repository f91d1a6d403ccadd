// Documents in object storage and blank-control reports.
// A document is one object in the bucket with its SHA-256, size and content type, attached to one
// subject (an item, a blank, a handling session, a transfer, a request, a usage report or a
// blank-control report). The subject is polymorphic: the application resolves it per type and
// decides visibility there. A document row is written only after its object is stored.
// A blank-control report keeps its parsed rows and the results computed from them; its original
// file is a document whose subject is the report. Documents, rows and reports are append-only.
export async function up({ sequelize }) {
	await sequelize.query(`
		CREATE TABLE documents (
			id            uuid PRIMARY KEY DEFAULT gen_random_uuid(),
			object_key    text NOT NULL UNIQUE CHECK (object_key ~ '^documents/[0-9a-f-]{36}$'),
			original_name text NOT NULL CHECK (length(original_name) BETWEEN 1 AND 255),
			content_type  text NOT NULL CHECK (length(content_type) BETWEEN 3 AND 100),
			size_bytes    bigint NOT NULL CHECK (size_bytes >= 0),
			sha256        text NOT NULL CHECK (sha256 ~ '^[0-9a-f]{64}$'),
			kind          text NOT NULL CHECK (kind IN ('blank_control_report', 'chromatogram', 'photo', 'shipping_form', 'other')),
			description   text NOT NULL DEFAULT '' CHECK (length(description) <= 500),
			-- the lab the document belongs to; null: the facility
			lab_id        uuid REFERENCES labs (id),
			subject_type  text NOT NULL CHECK (subject_type IN
			              ('item', 'blank', 'handling_session', 'transfer', 'request', 'usage_report', 'blank_control_report')),
			subject_id    uuid NOT NULL,
			uploaded_by   uuid REFERENCES users (id),
			uploaded_at   timestamptz NOT NULL DEFAULT now()
		);
		CREATE INDEX documents_subject_idx ON documents (subject_type, subject_id, uploaded_at);
		CREATE INDEX documents_lab_idx ON documents (lab_id);

		CREATE TABLE blank_control_reports (
			id           uuid PRIMARY KEY,
			title        text NOT NULL CHECK (length(title) BETWEEN 1 AND 200),
			lab_id       uuid REFERENCES labs (id),
			document_id  uuid NOT NULL UNIQUE REFERENCES documents (id),
			layout       text NOT NULL DEFAULT 'regolog-blank-control-1',
			settings     jsonb NOT NULL,
			results      jsonb NOT NULL,
			notes        jsonb NOT NULL DEFAULT '[]',
			flagged      integer NOT NULL DEFAULT 0 CHECK (flagged >= 0),
			created_by   uuid REFERENCES users (id),
			created_at   timestamptz NOT NULL DEFAULT now()
		);
		CREATE INDEX blank_control_reports_lab_idx ON blank_control_reports (lab_id, created_at);

		CREATE TABLE blank_control_report_items (
			report_id uuid NOT NULL REFERENCES blank_control_reports (id),
			item_id   uuid NOT NULL REFERENCES items (id),
			role      text NOT NULL CHECK (role IN ('sample', 'blank')),
			PRIMARY KEY (report_id, item_id)
		);
		CREATE INDEX blank_control_report_items_item_idx ON blank_control_report_items (item_id);

		CREATE TABLE blank_control_rows (
			report_id   uuid NOT NULL REFERENCES blank_control_reports (id),
			line        integer NOT NULL CHECK (line >= 2),
			analyte     text NOT NULL CHECK (length(analyte) BETWEEN 1 AND 80),
			enantiomer  text CHECK (enantiomer IN ('L', 'D')),
			item_id     uuid NOT NULL REFERENCES items (id),
			role        text NOT NULL CHECK (role IN ('sample', 'blank')),
			replicate   integer NOT NULL CHECK (replicate >= 1),
			value       double precision NOT NULL CHECK (value >= 0),
			unit        text NOT NULL CHECK (length(unit) BETWEEN 1 AND 20),
			uncertainty double precision CHECK (uncertainty >= 0),
			PRIMARY KEY (report_id, line)
		);

		CREATE TRIGGER documents_append_only BEFORE UPDATE OR DELETE ON documents
			FOR EACH ROW EXECUTE FUNCTION refuse_record_change();
		CREATE TRIGGER blank_control_reports_append_only BEFORE UPDATE OR DELETE ON blank_control_reports
			FOR EACH ROW EXECUTE FUNCTION refuse_record_change();
		CREATE TRIGGER blank_control_rows_append_only BEFORE UPDATE OR DELETE ON blank_control_rows
			FOR EACH ROW EXECUTE FUNCTION refuse_record_change();
		CREATE TRIGGER blank_control_report_items_append_only BEFORE UPDATE OR DELETE ON blank_control_report_items
			FOR EACH ROW EXECUTE FUNCTION refuse_record_change();
	`);
}

export async function down({ sequelize }) {
	await sequelize.query(`DROP TABLE blank_control_rows, blank_control_report_items, blank_control_reports, documents;`);
}
