import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import fc from 'fast-check';
import { QueryTypes } from 'sequelize';
import { migrateUp } from '../../src/lib/server/migrator';
import { formatCode, parseCode } from '../../src/lib/domain/codes';
import { scratchDatabase } from '../helpers/scratch-db';

// A split writes its children's codes with the database's item_code (migration 0052); it must give
// exactly the codes formatCode gives (ISO/IEC 7064:2003 MOD 37,36 check character).
describe('item codes computed by the database', () => {
	let scratch: Awaited<ReturnType<typeof scratchDatabase>>;
	beforeAll(async () => {
		scratch = await scratchDatabase('codes');
		await migrateUp(scratch.sequelize);
	});
	afterAll(() => scratch.drop());

	const sqlCodes = async (pairs: [string, number][]) =>
		(
			await scratch.sequelize.query<{ code: string }>(
				'SELECT item_code(x.prefix, x.serial) AS code FROM jsonb_to_recordset(CAST(:pairs AS jsonb)) AS x(n int, prefix text, serial bigint) ORDER BY n',
				{ type: QueryTypes.SELECT, replacements: { pairs: JSON.stringify(pairs.map(([prefix, serial], n) => ({ n, prefix, serial }))) } }
			)
		).map((r) => r.code);

	it('agrees with formatCode for any prefix and serial, at the padding boundary too', async () => {
		const pairs = fc.sample(fc.tuple(fc.stringMatching(/^[A-Z]{2,5}$/), fc.oneof(fc.integer({ min: 1, max: 200_000 }), fc.integer({ min: 1, max: 2 ** 40 }))), 2_000);
		for (const serial of [1, 9, 99_999, 100_000, 100_001, 999_999, 1_000_000]) pairs.push(['TRN', serial]);
		const got = await sqlCodes(pairs);
		expect(got).toEqual(pairs.map(([p, n]) => formatCode(p, n)));
		// and every one reads back as itself
		for (const code of got) expect(parseCode(code)).toMatchObject({ ok: true, code });
	});

	it('refuses what formatCode refuses', async () => {
		for (const [prefix, serial] of [['trn', 1], ['T', 1], ['TRNXYZ', 1], ['TR1', 1], ['TRN', 0], ['TRN', -4]] as [string, number][]) {
			expect(() => formatCode(prefix, serial)).toThrow();
			await expect(sqlCodes([[prefix, serial]])).rejects.toThrow(/prefix|serial/);
		}
	});
});
