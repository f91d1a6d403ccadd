// Migrates the configured database and, unless --no-seed, seeds the demo scenario.
import { db, closeDb } from '../src/lib/server/db';
import { migrateUp } from '../src/lib/server/migrator';
import { seedDemo } from '../src/lib/server/seed';
import { ensureBucket } from '../src/lib/server/storage';
import { checkpointNow } from '../src/lib/server/trail';

const args = new Set(process.argv.slice(2));
const sequelize = db();
try {
	const applied = await migrateUp(sequelize);
	console.log(applied.length ? `migrations applied: ${applied.join(', ')}` : 'schema up to date');
	if (!args.has('--no-seed')) {
		await seedDemo(sequelize, { log: (s) => console.log(s) });
		// the seeded trail's head, signed and mailed to the witnesses (nothing when it did not move)
		const cp = await checkpointNow(sequelize, 'start-up');
		if (cp) console.log(`trail checkpoint signed at event ${cp.seq} with key ${cp.keyId}`);
	}
	if (args.has('--bucket')) await ensureBucket();
} finally {
	await closeDb();
}
