// Labs, users and their roles, sessions, personal API tokens, single-use e-mail tokens,
// sign-in failure records for throttling, and the mail outbox.
export async function up({ sequelize }) {
	await sequelize.query(`
		CREATE EXTENSION IF NOT EXISTS pgcrypto;

		CREATE TABLE labs (
			id          uuid PRIMARY KEY DEFAULT gen_random_uuid(),
			name        text NOT NULL CHECK (length(name) BETWEEN 2 AND 120),
			short_name  text NOT NULL CHECK (short_name ~ '^[A-Za-z0-9][A-Za-z0-9 .-]{0,39}$'),
			institution text NOT NULL DEFAULT '' CHECK (length(institution) <= 200),
			contact_email text NOT NULL DEFAULT '' CHECK (length(contact_email) <= 254),
			active      boolean NOT NULL DEFAULT true,
			created_at  timestamptz NOT NULL DEFAULT now(),
			updated_at  timestamptz NOT NULL DEFAULT now()
		);
		CREATE UNIQUE INDEX labs_name_key ON labs (lower(name));
		CREATE UNIQUE INDEX labs_short_name_key ON labs (lower(short_name));

		CREATE TABLE users (
			id             uuid PRIMARY KEY DEFAULT gen_random_uuid(),
			email          text NOT NULL CHECK (length(email) BETWEEN 3 AND 254 AND email = lower(email)),
			name           text NOT NULL CHECK (length(name) BETWEEN 1 AND 120),
			role           text NOT NULL CHECK (role IN ('admin', 'curator', 'lab_member', 'auditor')),
			lab_id         uuid REFERENCES labs (id),
			password_hash  text,
			active         boolean NOT NULL DEFAULT true,
			deactivated_at timestamptz,
			created_at     timestamptz NOT NULL DEFAULT now(),
			updated_at     timestamptz NOT NULL DEFAULT now(),
			-- A lab member belongs to exactly one lab; the facility's own staff to none.
			CONSTRAINT users_lab_matches_role CHECK ((role = 'lab_member') = (lab_id IS NOT NULL))
		);
		CREATE UNIQUE INDEX users_email_key ON users (email);
		CREATE INDEX users_lab_idx ON users (lab_id);

		-- Users are deactivated, never deleted: the trail refers to them.
		CREATE FUNCTION refuse_user_delete() RETURNS trigger LANGUAGE plpgsql AS $$
		BEGIN
			RAISE EXCEPTION 'users are deactivated, never deleted (user %)', OLD.id;
		END $$;
		CREATE TRIGGER users_no_delete BEFORE DELETE ON users FOR EACH ROW EXECUTE FUNCTION refuse_user_delete();

		CREATE TABLE sessions (
			id          text PRIMARY KEY,
			user_id     uuid NOT NULL REFERENCES users (id),
			expires_at  timestamptz NOT NULL,
			ip          text NOT NULL DEFAULT '',
			user_agent  text NOT NULL DEFAULT '',
			created_at  timestamptz NOT NULL DEFAULT now()
		);
		CREATE INDEX sessions_user_idx ON sessions (user_id);
		CREATE INDEX sessions_expires_idx ON sessions (expires_at);

		CREATE TABLE api_tokens (
			id           uuid PRIMARY KEY DEFAULT gen_random_uuid(),
			user_id      uuid NOT NULL REFERENCES users (id),
			label        text NOT NULL CHECK (length(label) BETWEEN 1 AND 80),
			token_hash   text NOT NULL UNIQUE,
			prefix       text NOT NULL,
			last_used_at timestamptz,
			expires_at   timestamptz,
			revoked_at   timestamptz,
			created_at   timestamptz NOT NULL DEFAULT now()
		);
		CREATE INDEX api_tokens_user_idx ON api_tokens (user_id);

		CREATE TABLE email_tokens (
			id          uuid PRIMARY KEY DEFAULT gen_random_uuid(),
			user_id     uuid NOT NULL REFERENCES users (id),
			purpose     text NOT NULL CHECK (purpose IN ('invite', 'reset')),
			token_hash  text NOT NULL UNIQUE,
			expires_at  timestamptz NOT NULL,
			used_at     timestamptz,
			created_by  uuid REFERENCES users (id),
			created_at  timestamptz NOT NULL DEFAULT now()
		);
		CREATE INDEX email_tokens_user_idx ON email_tokens (user_id, purpose);

		CREATE TABLE sign_in_failures (
			id          bigserial PRIMARY KEY,
			account_key text NOT NULL,
			address     text NOT NULL,
			at          timestamptz NOT NULL DEFAULT now()
		);
		CREATE INDEX sign_in_failures_account_idx ON sign_in_failures (account_key, at);
		CREATE INDEX sign_in_failures_address_idx ON sign_in_failures (address, at);

		CREATE TABLE mail_outbox (
			id            bigserial PRIMARY KEY,
			to_address    text NOT NULL CHECK (length(to_address) BETWEEN 3 AND 254),
			subject       text NOT NULL CHECK (length(subject) BETWEEN 1 AND 300),
			body_text     text NOT NULL,
			body_html     text,
			kind          text NOT NULL,
			status        text NOT NULL DEFAULT 'queued' CHECK (status IN ('queued', 'sent', 'failed')),
			attempts      integer NOT NULL DEFAULT 0,
			next_attempt_at timestamptz NOT NULL DEFAULT now(),
			last_error    text,
			sent_at       timestamptz,
			created_at    timestamptz NOT NULL DEFAULT now()
		);
		CREATE INDEX mail_outbox_due_idx ON mail_outbox (next_attempt_at) WHERE status = 'queued';
	`);
}

export async function down({ sequelize }) {
	await sequelize.query(`
		DROP TABLE mail_outbox, sign_in_failures, email_tokens, api_tokens, sessions;
		DROP TRIGGER users_no_delete ON users;
		DROP FUNCTION refuse_user_delete();
		DROP TABLE users, labs;
	`);
}
