import { describe, it, expect, afterAll } from 'vitest';
import { migrateUp, migrator } from '../../src/lib/server/migrator';
import { seedDemo } from '../../src/lib/server/seed';
import { scratchDatabase, snapshot } from '../helpers/scratch-db';

const scratch = await scratchDatabase('migrations');
afterAll(() => scratch.drop());

describe('migrations and seed', () => {
	it('migrates an empty database all the way up, and a second run applies nothing', async () => {
		const applied = await migrateUp(scratch.sequelize);
		const files = (await migrator(scratch.sequelize).executed()).map((m) => m.name);
		expect(applied.length).toBeGreaterThan(0);
		expect(files).toEqual(applied);
		expect(await migrateUp(scratch.sequelize)).toEqual([]);
		const pending = await migrator(scratch.sequelize).pending();
		expect(pending).toEqual([]);
	});

	it('seeds the demo, and a second seed changes nothing', async () => {
		await seedDemo(scratch.sequelize);
		const once = await snapshot(scratch.sequelize);
		expect(Object.values(once).some((rows) => rows.length > 0)).toBe(true);
		await seedDemo(scratch.sequelize);
		expect(await snapshot(scratch.sequelize)).toEqual(once);
	});
});
