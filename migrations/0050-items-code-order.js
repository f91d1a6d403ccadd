// The items table's default order (collection prefix, then serial) served by one index on items,
// so a page of the list never sorts the whole registry.
export async function up({ sequelize }) {
	await sequelize.query(`CREATE INDEX items_code_order_idx ON items (split_part(code, '-', 1), serial);`);
}

export async function down({ sequelize }) {
	await sequelize.query('DROP INDEX items_code_order_idx');
}
