// The background jobs' shared record: one row per job with its last finished run, so that several
// app instances keep one schedule between them (a job that ran on one instance a minute ago is not
// run again on another), and an operator can see which instance ran what and how it went.
export async function up({ sequelize }) {
	await sequelize.query(`
		CREATE TABLE job_runs (
			name             text PRIMARY KEY CHECK (name ~ '^[a-z][a-z0-9-]{1,62}$'),
			last_started_at  timestamptz NOT NULL,
			last_finished_at timestamptz NOT NULL,
			last_instance    text NOT NULL,
			last_error       text,
			runs             bigint NOT NULL DEFAULT 0
		);
	`);
}

export async function down({ sequelize }) {
	await sequelize.query('DROP TABLE job_runs;');
}
