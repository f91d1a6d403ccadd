// Item codes set their check character apart with a slash: PREFIX-NNNNN/C (src/lib/domain/codes.ts).
// item_code() now writes that form; every stored code in the older form PREFIX-NNNNN-C gets the slash
// in place of its last hyphen (the check character stays, ISO/IEC 7064:2003 MOD 37,36 over prefix and
// serial), and every lineage entry, which quotes its own and its parent's code, is written again.
// Codes are otherwise fixed (items_identity_fixed): that guard is lifted for this one rewrite only,
// inside the migration's implicit transaction.
//
// Signatures already given are bound to manifests that quote the older codes: transfers prepared
// before this migration keep manifest_version 1, whose manifest is rebuilt with the codes written
// PREFIX-NNNNN-C (src/lib/server/custody/manifest.ts), so those signatures still verify.

/** item_code() as migration 0052 wrote it, with `separator` before the check character. */
const itemCodeFunction = (separator) => `
		CREATE OR REPLACE FUNCTION item_code(prefix text, serial bigint) RETURNS text
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
			RETURN prefix || '-' || digits || '${separator}' || substr(alphabet, (37 - p) % 36 + 1, 1);
		END $$;
`;

export async function up({ sequelize }) {
	await sequelize.query(`
		${itemCodeFunction('/')}

		ALTER TABLE transfers ADD COLUMN manifest_version smallint NOT NULL DEFAULT 1 CHECK (manifest_version IN (1, 2));
		ALTER TABLE transfers ALTER COLUMN manifest_version SET DEFAULT 2;

		ALTER TABLE items DROP CONSTRAINT items_code_characters;
		ALTER TABLE items DISABLE TRIGGER items_identity_fixed;
		UPDATE items SET code = regexp_replace(code, '-([0-9A-Z])$', '/\\1') WHERE code ~ '^[A-Z]{2,5}-[0-9]{5,}-[0-9A-Z]$';
		ALTER TABLE items ENABLE TRIGGER items_identity_fixed;
		ALTER TABLE items ADD CONSTRAINT items_code_characters CHECK (code ~ '^[A-Z0-9/-]+$');
		-- each entry again, now that every parent's code is rewritten too
		UPDATE items SET lineage_entry = NULL;
		ANALYZE items;
	`);
}

export async function down({ sequelize }) {
	await sequelize.query(`
		${itemCodeFunction('-')}
		ALTER TABLE items DROP CONSTRAINT items_code_characters;
		ALTER TABLE items DISABLE TRIGGER items_identity_fixed;
		UPDATE items SET code = regexp_replace(code, '/([0-9A-Z])$', '-\\1') WHERE code ~ '^[A-Z]{2,5}-[0-9]{5,}/[0-9A-Z]$';
		ALTER TABLE items ENABLE TRIGGER items_identity_fixed;
		ALTER TABLE items ADD CONSTRAINT items_code_characters CHECK (code ~ '^[A-Z0-9-]+$');
		UPDATE items SET lineage_entry = NULL;
		ALTER TABLE transfers DROP COLUMN manifest_version;
	`);
}
