// The trail's writers and witnesses. The app's login role no longer owns anything (the owner role
// runs the migrations, and the migrator grants the app only what it needs: migrator.ts), so it
// cannot disable or drop the trail's triggers. It appends only through trail_append(), which runs
// with the owner's rights (SECURITY DEFINER): the function takes the append lock, links the event
// to the head and computes its hash, and refuses an event whose body does not say what its
// columns say. Signed checkpoints of the head and the public keys that signed them are kept in two
// more append-only tables.
export async function up({ sequelize }) {
	await sequelize.query(`
		CREATE FUNCTION trail_append(locks_after bigint, p_head text, p_tail text, p_at timestamptz, p_actor_id uuid, p_actor_label text,
		                             p_action text, p_subject_type text, p_subject_id text, p_before jsonb, p_after jsonb, p_from_body boolean,
		                             OUT trail_seq bigint, OUT trail_prev_hash text, OUT trail_hash text)
		LANGUAGE plpgsql VOLATILE SECURITY DEFINER SET search_path = public, pg_temp AS $$
		DECLARE
			b text;
			ok boolean;
		BEGIN
			SELECT h.seq, h.prev INTO trail_seq, trail_prev_hash FROM trail_head_locked(locks_after) h;
			b := p_head || trail_seq::text || p_tail;
			IF p_from_body THEN
				p_before := (b::jsonb)->'before';
				p_after := (b::jsonb)->'after';
			END IF;
			trail_hash := encode(sha256(convert_to(trail_prev_hash || b, 'UTF8')), 'hex');
			INSERT INTO trail_events (seq, at, actor_id, actor_label, action, subject_type, subject_id, before, after, prev_hash, hash, body)
			VALUES (trail_seq, p_at, p_actor_id, p_actor_label, p_action, p_subject_type, p_subject_id, p_before, p_after, trail_prev_hash, trail_hash, b)
			RETURNING body_matches INTO ok;
			IF ok IS NOT TRUE THEN
				RAISE EXCEPTION 'trail event % does not say what its columns say', trail_seq USING ERRCODE = 'check_violation';
			END IF;
		END $$;

		CREATE TABLE trail_keys (
			key_id      text PRIMARY KEY CHECK (key_id ~ '^[0-9a-f]{16}$'),
			public_key  text NOT NULL UNIQUE,
			valid_from  timestamptz NOT NULL DEFAULT now(),
			registered_seq bigint
		);
		CREATE TABLE trail_checkpoints (
			seq        bigint PRIMARY KEY CHECK (seq > 0),
			hash       char(64) NOT NULL,
			count      bigint NOT NULL,
			at         timestamptz NOT NULL,
			key_id     text NOT NULL REFERENCES trail_keys (key_id),
			signed     text NOT NULL,
			signature  text NOT NULL
		);
		CREATE TRIGGER trail_keys_no_update BEFORE UPDATE OR DELETE ON trail_keys
			FOR EACH ROW EXECUTE FUNCTION refuse_trail_change();
		CREATE TRIGGER trail_keys_no_truncate BEFORE TRUNCATE ON trail_keys
			FOR EACH STATEMENT EXECUTE FUNCTION refuse_trail_change();
		CREATE TRIGGER trail_checkpoints_no_update BEFORE UPDATE OR DELETE ON trail_checkpoints
			FOR EACH ROW EXECUTE FUNCTION refuse_trail_change();
		CREATE TRIGGER trail_checkpoints_no_truncate BEFORE TRUNCATE ON trail_checkpoints
			FOR EACH STATEMENT EXECUTE FUNCTION refuse_trail_change();
	`);
}

export async function down({ sequelize }) {
	await sequelize.query('DROP TABLE trail_checkpoints; DROP TABLE trail_keys; DROP FUNCTION trail_append');
}
