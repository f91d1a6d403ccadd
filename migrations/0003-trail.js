// The tamper-evident trail: append-only, hash-chained events. The database itself refuses
// UPDATE, DELETE and TRUNCATE on it.
export async function up({ sequelize }) {
	await sequelize.query(`
		CREATE TABLE trail_events (
			seq          bigint PRIMARY KEY CHECK (seq > 0),
			at           timestamptz NOT NULL,
			actor_id     uuid REFERENCES users (id),
			actor_label  text NOT NULL,
			action       text NOT NULL CHECK (action ~ '^[a-z][a-z_.]{1,80}$'),
			subject_type text NOT NULL,
			subject_id   text NOT NULL,
			before       jsonb,
			after        jsonb,
			prev_hash    char(64) NOT NULL,
			hash         char(64) NOT NULL UNIQUE
		);
		CREATE INDEX trail_subject_idx ON trail_events (subject_type, subject_id, seq);
		CREATE INDEX trail_actor_idx ON trail_events (actor_id, seq);
		CREATE INDEX trail_at_idx ON trail_events (at);

		CREATE FUNCTION refuse_trail_change() RETURNS trigger LANGUAGE plpgsql AS $$
		BEGIN
			RAISE EXCEPTION 'the trail is append-only: % refused', TG_OP USING ERRCODE = 'insufficient_privilege';
		END $$;
		CREATE TRIGGER trail_no_update BEFORE UPDATE OR DELETE ON trail_events
			FOR EACH ROW EXECUTE FUNCTION refuse_trail_change();
		CREATE TRIGGER trail_no_truncate BEFORE TRUNCATE ON trail_events
			FOR EACH STATEMENT EXECUTE FUNCTION refuse_trail_change();
	`);
}
