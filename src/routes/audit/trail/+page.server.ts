import { QueryTypes } from 'sequelize';
import { db } from '$lib/server/db';
import { hasRole, ADMINS } from '$lib/server/auth/access';
import { checkCheckpoint, keyMap } from '$lib/domain/trail-verify';
import { listCheckpoints, listKeys, signingKey } from '$lib/server/trail';
import { nodeTrailCrypto } from '$lib/server/trail/node-crypto';
import type { PageServerLoad } from './$types';

/**
 * The trail at a glance: the last signed checkpoint and whether its signature verifies, how many
 * events came after it (and the newest of them), the recent checkpoints and the signing keys. The
 * chain itself is verified by the page's buttons (GET /api/trail/verify).
 */
export const load: PageServerLoad = async ({ locals }) => {
	const sq = db();
	const [recent, keys, [head], latest] = await Promise.all([
		listCheckpoints(sq, { last: 8 }),
		listKeys(sq),
		sq.query<{ seq: number | null }>('SELECT max(seq) AS seq FROM trail_events', { type: QueryTypes.SELECT }),
		sq.query<{ seq: number; at: Date; actor_label: string; action: string; subject_type: string; subject_id: string }>(
			'SELECT seq, at, actor_label, action, subject_type, subject_id FROM trail_events ORDER BY seq DESC LIMIT 8',
			{ type: QueryTypes.SELECT }
		)
	]);
	const last = recent.at(-1) ?? null;
	const check = last ? await checkCheckpoint(last, keyMap(keys), nodeTrailCrypto) : null;
	const headSeq = Number(head?.seq ?? 0);
	const current = signingKey().keyId;
	return {
		head: headSeq,
		last: last && check ? { ...last, time: check.ok ? check.fields.time : null, signature: check.ok ? 'valid' : 'invalid', reason: check.ok ? null : check.reason } : null,
		after: headSeq - (last?.seq ?? 0),
		recent: recent.reverse(),
		keys: keys.map((k) => ({ ...k, current: k.keyId === current })),
		latest: latest.map((e) => ({ seq: Number(e.seq), at: new Date(e.at).toISOString(), actor: e.actor_label, action: e.action, subject: `${e.subject_type} ${e.subject_id}` })),
		canRotate: hasRole(locals.user!.role, ADMINS)
	};
};
