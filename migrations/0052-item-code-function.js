// Item codes computed by the database as src/lib/domain/codes.ts computes them (PREFIX-NNNNN-C,
// check character by ISO/IEC 7064:2003 MOD 37,36), so that a split can take its children's serials
// and write their codes in the same statement: the collection's serial counter is then locked only
// from that statement to the commit. The registry test checks item_code against formatCode.
export async function up({ sequelize }) {
	await sequelize.query(`
		CREATE FUNCTION item_code(prefix text, serial bigint) RETURNS text
		LANGUAGE plpgsql IMMUTABLE STRICT PARALLEL SAFE AS $$
		DECLARE
			alphabet constant text := '0123456789ABCDEFGHIJKLMNOPQRSTUVWXYZ';
			digits text;
			body text;
			p int := 36;
			s int;
		BEGIN
			IF prefix !~ '^[A-Z]{2,5}$' THEN
				RAISE EXCEPTION 'collection prefix must be 2 to 5 capital letters, got "%"', prefix;
			END IF;
			IF serial < 1 THEN
				RAISE EXCEPTION 'serial must be a whole number ≥ 1, got %', serial;
			END IF;
			digits := CASE WHEN length(serial::text) >= 5 THEN serial::text ELSE lpad(serial::text, 5, '0') END;
			body := prefix || digits;
			FOR k IN 1 .. length(body) LOOP
				s := (p + strpos(alphabet, substr(body, k, 1)) - 1) % 36;
				IF s = 0 THEN s := 36; END IF;
				p := (2 * s) % 37;
			END LOOP;
			RETURN prefix || '-' || digits || '-' || substr(alphabet, (37 - p) % 36 + 1, 1);
		END $$;
	`);
}

export async function down({ sequelize }) {
	await sequelize.query('DROP FUNCTION item_code(text, bigint)');
}
