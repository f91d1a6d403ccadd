// `npm run docs:cleanup`: removes objects in the document bucket that no document record names
// and that are older than the grace period (REGOLOG_ORPHAN_GRACE_MINUTES, default 60).
import { db, closeDb } from '../src/lib/server/db';
import { cleanupOrphans } from '../src/lib/server/documents/cleanup';

try {
	const r = await cleanupOrphans(db());
	console.log(`looked at ${r.scanned} objects; removed ${r.removed.length} without a record; left ${r.young} younger than the grace period`);
	for (const k of r.removed) console.log(`  removed ${k}`);
} finally {
	await closeDb();
}
