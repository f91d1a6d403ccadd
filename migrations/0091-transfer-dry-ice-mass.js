// The net mass of dry ice packed with a transfer, in whole grams: carriers declare it, so the
// transfer records it, its manifest binds it (manifest version 2) and its receipt shows it. It is
// required with dry ice and refused with any other coolant, for every transfer prepared from now
// on; those prepared before (manifest version 1) did not record it.
export async function up({ sequelize }) {
	await sequelize.query(`
		ALTER TABLE transfers ADD COLUMN dry_ice_net_g integer CHECK (dry_ice_net_g BETWEEN 1 AND 500000),
			ADD CONSTRAINT transfers_dry_ice_mass CHECK (manifest_version = 1 OR (coolant = 'dry_ice') = (dry_ice_net_g IS NOT NULL));
	`);
}

export async function down({ sequelize }) {
	await sequelize.query('ALTER TABLE transfers DROP CONSTRAINT transfers_dry_ice_mass, DROP COLUMN dry_ice_net_g');
}
