// An allocation request keeps what the lab chose on the offer: the filters as constraints (the same
// fields as the offer's, domain/offer.ts), the items it picked, and how many pieces it wants.
export async function up({ sequelize }) {
	await sequelize.query(`
		ALTER TABLE allocation_requests
			ADD COLUMN pieces integer NOT NULL DEFAULT 1 CONSTRAINT requests_pieces CHECK (pieces BETWEEN 1 AND 12),
			ADD COLUMN constraints jsonb NOT NULL DEFAULT '{}' CONSTRAINT requests_constraints CHECK (jsonb_typeof(constraints) = 'object'),
			ADD COLUMN item_ids uuid[] NOT NULL DEFAULT '{}' CONSTRAINT requests_item_ids CHECK (cardinality(item_ids) <= 20);
	`);
}

export async function down({ sequelize }) {
	await sequelize.query(`ALTER TABLE allocation_requests DROP COLUMN pieces, DROP COLUMN constraints, DROP COLUMN item_ids;`);
}
