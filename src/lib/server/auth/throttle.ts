import { QueryTypes } from 'sequelize';
import { models } from '../models';

/**
 * Sign-in throttling: failures are counted per account key (the e-mail as typed, whether or not
 * an account exists) and per client address over a sliding window. Past a free allowance each
 * further attempt must wait a doubling delay; the answer never reveals whether the account exists.
 */
export const THROTTLE = {
	windowMinutes: 15,
	freePerAccount: 5,
	freePerAddress: 20,
	baseDelaySeconds: 2,
	maxDelaySeconds: 300
};

export function accountKey(email: string): string {
	return email.trim().toLowerCase().normalize('NFKC').slice(0, 254);
}

function delayFor(failures: number, free: number): number {
	if (failures < free) return 0;
	return Math.min(THROTTLE.maxDelaySeconds, THROTTLE.baseDelaySeconds * 2 ** (failures - free));
}

/** Seconds the caller must still wait before another attempt, 0 when it may try now. */
export async function retryAfterSeconds(email: string, address: string): Promise<number> {
	const sequelize = models();
	const rows = await sequelize.query<{ kind: string; n: number; last: Date | null }>(
		`SELECT 'account' AS kind, count(*)::int AS n, max(at) AS last FROM sign_in_failures
		   WHERE account_key = :key AND at > now() - make_interval(mins => :win)
		 UNION ALL
		 SELECT 'address', count(*)::int, max(at) FROM sign_in_failures
		   WHERE address = :address AND at > now() - make_interval(mins => :win)`,
		{ type: QueryTypes.SELECT, replacements: { key: accountKey(email), address, win: THROTTLE.windowMinutes } }
	);
	let wait = 0;
	for (const r of rows) {
		if (!r.last) continue;
		const delay = delayFor(r.n, r.kind === 'account' ? THROTTLE.freePerAccount : THROTTLE.freePerAddress);
		const elapsed = (Date.now() - new Date(r.last).getTime()) / 1000;
		wait = Math.max(wait, Math.ceil(delay - elapsed));
	}
	return Math.max(0, wait);
}

export async function recordFailure(email: string, address: string): Promise<void> {
	await models().query('INSERT INTO sign_in_failures (account_key, address) VALUES (:key, :address)', {
		replacements: { key: accountKey(email), address }
	});
}

export async function clearFailures(email: string): Promise<void> {
	await models().query('DELETE FROM sign_in_failures WHERE account_key = :key', {
		replacements: { key: accountKey(email) }
	});
}
