// Each trail event keeps the exact canonical JSON text (RFC 8785) that its hash was computed over,
// so verification hashes the stored text. Whether the columns still say what the body says is
// computed by the database whenever a row is written (a stored generated column, which no UPDATE
// can set by hand): a column changed behind the trail's back turns it false at that very event.
// Events written before this migration have no body (NULL) and are verified from their columns.
export async function up({ sequelize }) {
	await sequelize.query(`
		-- declared IMMUTABLE for the generated column: the zone is fixed (UTC) and the format has
		-- numeric fields only, so the result depends on the arguments alone
		CREATE FUNCTION trail_body_matches(body text, seq bigint, at timestamptz, actor_id uuid, actor_label text, action text,
		                                   subject_type text, subject_id text, before jsonb, after jsonb)
		RETURNS boolean LANGUAGE plpgsql IMMUTABLE AS $$
		BEGIN
			IF body IS NULL THEN
				RETURN NULL;
			END IF;
			RETURN body::jsonb = jsonb_build_object(
				'seq', seq, 'at', to_char(at AT TIME ZONE 'UTC', 'YYYY-MM-DD"T"HH24:MI:SS.MS"Z"'),
				'actor', jsonb_build_object('id', actor_id, 'label', actor_label),
				'action', action,
				'subject', jsonb_build_object('type', subject_type, 'id', subject_id),
				'before', coalesce(before, 'null'::jsonb), 'after', coalesce(after, 'null'::jsonb));
		EXCEPTION WHEN invalid_text_representation THEN
			RETURN false;
		END $$;
		ALTER TABLE trail_events ADD COLUMN body text;
		ALTER TABLE trail_events ADD COLUMN body_matches boolean GENERATED ALWAYS AS (
			trail_body_matches(body, seq, at, actor_id, actor_label, action, subject_type, subject_id, before, after)) STORED;
	`);
}

export async function down({ sequelize }) {
	await sequelize.query('ALTER TABLE trail_events DROP COLUMN body_matches, DROP COLUMN body; DROP FUNCTION trail_body_matches');
}
