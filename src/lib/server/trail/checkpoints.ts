// Signed checkpoints of the trail's head (DESIGN.md §3.9): every 1,000 events, at start-up when the
// head moved since the last one, and at least hourly while anything is appended. Each is the
// canonical JSON of seq, head hash, event count, time and key id (checkpointText), signed with
// Ed25519 by the key outside the database (keys.ts), stored, and mailed to the witnesses through
// the outbox, so a copy of every head exists outside the database.
import { QueryTypes, type Sequelize, type Transaction } from 'sequelize';
import { checkpointText, type PublicKeyEntry, type SignedCheckpoint } from '../../domain/trail-verify';
import { config } from '../config';
import { enqueueMail } from '../outbox';
import { checkpointMail } from '../mail-templates';
import { appendTrail, onTrailMilestone, SYSTEM_ACTOR, type TrailActor } from './append';
import { kickJob, type Job } from '../jobs';
import { facilityName } from '../facility';
import { replaceKeyFile, signingKey, signText, type SigningKey } from './keys';

/** Advisory lock of the checkpoint job and key rotations (the append lock is 1918986604). */
const CHECKPOINT_LOCK = 1918986605;

export async function listKeys(sq: Sequelize, t?: Transaction): Promise<PublicKeyEntry[]> {
	const rows = await sq.query<{ key_id: string; public_key: string; valid_from: Date; valid_until: Date | null }>(
		`SELECT key_id, public_key, valid_from, lead(valid_from) OVER (ORDER BY valid_from, key_id) AS valid_until FROM trail_keys ORDER BY valid_from, key_id`,
		{ type: QueryTypes.SELECT, transaction: t }
	);
	return rows.map((r) => ({ keyId: r.key_id, publicKey: r.public_key, validFrom: new Date(r.valid_from).toISOString(), validUntil: r.valid_until ? new Date(r.valid_until).toISOString() : null }));
}

export async function listCheckpoints(sq: Sequelize, opts: { seq?: number; after?: number; upTo?: number; last?: number } = {}): Promise<SignedCheckpoint[]> {
	const where = ['true'];
	if (opts.seq !== undefined) where.push('seq = :seq');
	if (opts.after !== undefined) where.push('seq > :after');
	if (opts.upTo !== undefined) where.push('seq <= :upTo');
	const inner = `SELECT seq, hash, key_id, signed, signature FROM trail_checkpoints WHERE ${where.join(' AND ')} ORDER BY seq ${opts.last ? 'DESC LIMIT :last' : ''}`;
	const rows = await sq.query<{ seq: number; hash: string; key_id: string; signed: string; signature: string }>(`SELECT * FROM (${inner}) c ORDER BY seq`, {
		type: QueryTypes.SELECT,
		replacements: opts
	});
	return rows.map((r) => ({ seq: Number(r.seq), hash: r.hash, keyId: r.key_id, signed: r.signed, signature: r.signature }));
}

/**
 * Registers the current key when the database does not know it yet: its public key is stored,
 * and the registration (or, with an earlier key on record, the rotation) is a trail event.
 */
async function registerKey(sq: Sequelize, t: Transaction, key: SigningKey, actor: TrailActor, now: Date): Promise<void> {
	const [known] = await sq.query<{ key_id: string }>(`SELECT key_id FROM trail_keys WHERE key_id = :id`, { type: QueryTypes.SELECT, transaction: t, replacements: { id: key.keyId } });
	if (known) return;
	const [previous] = await sq.query<{ key_id: string }>(`SELECT key_id FROM trail_keys ORDER BY valid_from DESC, key_id DESC LIMIT 1`, { type: QueryTypes.SELECT, transaction: t });
	const ev = await appendTrail(sq, t, {
		actor,
		action: previous ? 'trail.key_rotated' : 'trail.key_registered',
		subjectType: 'trail_key',
		subjectId: key.keyId,
		before: previous ? { keyId: previous.key_id } : undefined,
		after: { keyId: key.keyId, fingerprint: key.fingerprint, source: key.source }
	});
	await sq.query(`INSERT INTO trail_keys (key_id, public_key, valid_from, registered_seq) VALUES (:id, :pem, :from, :seq)`, {
		transaction: t,
		replacements: { id: key.keyId, pem: key.publicKey, from: now, seq: ev.seq }
	});
}

async function witnesses(sq: Sequelize, t: Transaction): Promise<string[]> {
	if (config.trail.witnesses.length) return config.trail.witnesses;
	const rows = await sq.query<{ email: string }>(`SELECT email FROM users WHERE active AND role = 'auditor' ORDER BY email`, { type: QueryTypes.SELECT, transaction: t });
	return rows.map((r) => r.email);
}

export type CheckpointReason = 'milestone' | 'start-up' | 'hourly' | 'on-demand';

/**
 * Signs a checkpoint of the head when the rule for `reason` says one is due: 'milestone' when
 * `checkpointEvery` events (1,000) came since the last, 'hourly' when the last is older than
 * `checkpointMinutes` (60), 'start-up' and 'on-demand' whenever the head moved. Safe with several
 * app instances by itself: it runs in one transaction holding an advisory lock, and reads the head
 * and the last checkpoint only once it holds it, so two instances never sign twice (the seq is the
 * key, too). Answers the checkpoint made, or null when none was due.
 */
export async function checkpointNow(sq: Sequelize, reason: CheckpointReason, actor: TrailActor = SYSTEM_ACTOR): Promise<SignedCheckpoint | null> {
	const key = signingKey();
	return sq.transaction(async (t) => {
		await sq.query('SELECT pg_advisory_xact_lock(:k)', { transaction: t, replacements: { k: CHECKPOINT_LOCK } });
		const [{ now }] = await sq.query<{ now: Date }>(`SELECT date_trunc('milliseconds', clock_timestamp()) AS now`, { type: QueryTypes.SELECT, transaction: t });
		await registerKey(sq, t, key, actor, now);
		const [head] = await sq.query<{ seq: number; hash: string }>(`SELECT seq, hash FROM trail_events ORDER BY seq DESC LIMIT 1`, { type: QueryTypes.SELECT, transaction: t });
		if (!head) return null;
		const [last] = await sq.query<{ seq: number; at: Date }>(`SELECT seq, at FROM trail_checkpoints ORDER BY seq DESC LIMIT 1`, { type: QueryTypes.SELECT, transaction: t });
		const moved = Number(head.seq) - Number(last?.seq ?? 0);
		if (moved <= 0) return null;
		if (reason === 'milestone' && moved < config.trail.checkpointEvery) return null;
		if (reason === 'hourly' && last && now.getTime() - new Date(last.at).getTime() < config.trail.checkpointMinutes * 60_000) return null;
		const [{ count }] = await sq.query<{ count: number }>(`SELECT count(*)::int AS count FROM trail_events WHERE seq <= :s`, { type: QueryTypes.SELECT, transaction: t, replacements: { s: head.seq } });
		const fields = { seq: Number(head.seq), hash: head.hash, count, time: now.toISOString(), keyId: key.keyId };
		const signed = checkpointText(fields);
		const cp: SignedCheckpoint = { seq: fields.seq, hash: fields.hash, keyId: key.keyId, signed, signature: signText(key, signed) };
		const [made] = await sq.query<{ seq: number }>(
			`INSERT INTO trail_checkpoints (seq, hash, count, at, key_id, signed, signature) VALUES (:seq, :hash, :count, :at, :keyId, :signed, :signature)
			 ON CONFLICT (seq) DO NOTHING RETURNING seq`,
			{ type: QueryTypes.SELECT, transaction: t, replacements: { ...cp, count, at: now } }
		);
		if (!made) return null;
		const mail = checkpointMail(cp, key.fingerprint, await facilityName(sq, t));
		for (const to of await witnesses(sq, t)) await enqueueMail(t, { to, kind: 'trail_checkpoint', ...mail });
		return cp;
	});
}

/**
 * Rotates the signing key: a new key file, registered at once (the rotation is a trail event), and
 * a checkpoint signed with it. Under the checkpoint lock, so no checkpoint is signed meanwhile.
 */
export async function rotateSigningKey(sq: Sequelize, actor: TrailActor): Promise<{ keyId: string; checkpoint: SignedCheckpoint | null }> {
	await sq.transaction(async (t) => {
		await sq.query('SELECT pg_advisory_xact_lock(:k)', { transaction: t, replacements: { k: CHECKPOINT_LOCK } });
		const [{ now }] = await sq.query<{ now: Date }>(`SELECT date_trunc('milliseconds', clock_timestamp()) AS now`, { type: QueryTypes.SELECT, transaction: t });
		await registerKey(sq, t, replaceKeyFile(), actor, now);
	});
	return { keyId: signingKey().keyId, checkpoint: await checkpointNow(sq, 'on-demand', actor) };
}

/**
 * The checkpoint job: at start-up, after every 1,000th event (the append kicks it) and checked every
 * minute for the hourly rule. It runs through the exclusive job runner (src/lib/server/jobs.ts), one
 * instance at a time; `checkpointNow` is safe with several instances by itself too, as it signs under
 * an advisory lock of its own after reading the head.
 */
export function checkpointJob(sq: () => Sequelize, everyMs = 60_000): Job {
	let startedUp = false;
	const job: Job = {
		name: 'trail-checkpoint',
		everyMs,
		firstAfterMs: 1000,
		run: async () => {
			if (!startedUp) {
				await checkpointNow(sq(), 'start-up');
				startedUp = true;
			}
			await checkpointNow(sq(), 'milestone');
			await checkpointNow(sq(), 'hourly');
		}
	};
	onTrailMilestone(() => void kickJob(job));
	return job;
}
