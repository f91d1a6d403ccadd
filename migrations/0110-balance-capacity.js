// A balance's capacity (its maximum load, µg): a weighing above it is not a measurement, so the
// split and registration services refuse it and the allocation planner never plans one. Optional:
// a balance whose capacity was not recorded is taken to hold whatever is put on it, as before.
export async function up({ sequelize }) {
	await sequelize.query('ALTER TABLE balances ADD COLUMN capacity_ug bigint CHECK (capacity_ug > 0)');
}

export async function down({ sequelize }) {
	await sequelize.query('ALTER TABLE balances DROP COLUMN capacity_ug');
}
