// `npm run docs:cleanup`: removes objects in the document bucket that no document record names
// and that are older than the grace period (REGOLOG_ORPHAN_GRACE_MINUTES, default 60). It takes
// the same lock as the servers' own clean-up job, so it never runs beside one.
import { db, closeDb } from '../src/lib/server/db';
import { cleanupOrphans } from '../src/lib/server/documents/cleanup';
import { runExclusive } from '../src/lib/server/jobs';

try {
	const run = await runExclusive('document-cleanup', () => cleanupOrphans(db()));
	if (!run.ran) {
		console.log('a server is running the clean-up right now; try again in a while');
	} else {
		const r = run.value;
		console.log(`looked at ${r.scanned} objects; removed ${r.removed.length} without a record; left ${r.young} younger than the grace period`);
		for (const k of r.removed) console.log(`  removed ${k}`);
	}
} finally {
	await closeDb();
}
