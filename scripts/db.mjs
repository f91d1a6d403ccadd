// npm run db:start | db:stop | db:status — the PostgreSQL cluster of a profile (REGOLOG_PROFILE, default dev).
import { profile } from './lib/profile.mjs';
import { startCluster, stopCluster, clusterStatus } from './lib/pg.mjs';

const pr = profile(process.env.REGOLOG_PROFILE ?? 'dev');
const cmd = process.argv[2];
if (cmd === 'start') {
	const r = await startCluster({ root: pr.root, port: pr.dbPort });
	console.log(`PostgreSQL ${r.reused ? 'already running' : 'started'} on 127.0.0.1:${pr.dbPort} (${r.dir})`);
} else if (cmd === 'stop') {
	stopCluster({ root: pr.root });
} else {
	console.log(clusterStatus({ root: pr.root }));
}
