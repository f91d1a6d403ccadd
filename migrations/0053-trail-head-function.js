// The head of the trail for the next append, read after taking the append lock. A VOLATILE function
// takes a fresh snapshot for each statement it runs (PostgreSQL documentation, "Function Volatility
// Categories"), so, called from inside a larger statement whose own snapshot was taken before the
// lock, it still sees the event the previous writer committed. That lets an append be part of the
// same statement as the change it records. Same advisory lock key as before (0x7261696c), so
// appends of both kinds keep to one chain. `after` is not used: a statement passes the result of
// its own locking steps there, because a function's arguments are computed before it runs, so the
// trail's lock is always taken last (other writers lock a collection, then append: the same order).
export async function up({ sequelize }) {
	await sequelize.query(`
		CREATE FUNCTION trail_head_locked(after bigint, OUT seq bigint, OUT prev text) LANGUAGE plpgsql VOLATILE AS $$
		BEGIN
			PERFORM pg_advisory_xact_lock(1918986604);
			SELECT e.seq + 1, e.hash::text INTO seq, prev FROM trail_events e ORDER BY e.seq DESC LIMIT 1;
			IF NOT FOUND THEN
				seq := 1;
				prev := repeat('0', 64);
			END IF;
		END $$;
	`);
}

export async function down({ sequelize }) {
	await sequelize.query('DROP FUNCTION trail_head_locked(bigint)');
}
