// Facility-wide settings: one row per key, each value JSON.
export async function up({ sequelize }) {
	await sequelize.query(`
		CREATE TABLE settings (
			key         text PRIMARY KEY CHECK (key ~ '^[a-z][a-z0-9_.]{1,62}$'),
			value       jsonb NOT NULL,
			updated_at  timestamptz NOT NULL DEFAULT now()
		);
	`);
}

export async function down({ sequelize }) {
	await sequelize.query('DROP TABLE settings');
}
