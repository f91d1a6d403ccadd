import { QueryTypes, type Sequelize } from 'sequelize';
import { hostname } from 'node:os';
import { db } from './db';

/**
 * Background work that must run on one app instance at a time, however many serve the same
 * database. Each run holds a PostgreSQL advisory lock (transaction level, two-key form in a class
 * of its own, so it never meets the trail's single-key lock) on a connection of its own for as long
 * as the job runs; the job itself works in transactions of its own. An instance that dies mid-run
 * loses its connection, PostgreSQL ends that transaction and the lock goes with it: the next tick on
 * any instance runs the job again. A job is therefore written so that a run cut short anywhere can
 * be run again (the outbox claims each message with a row lock inside the transaction that sends it;
 * the clean-up checks the records again before removing; reminders mark what they sent in the
 * transaction that queues the mail).
 *
 * A job with `shared: true` keeps one schedule for all instances: `job_runs` records each finished
 * run, and a run that finds another one started less than nine tenths of `everyMs` ago does nothing
 * (the tenth absorbs the timers' drift, so the runs of two instances never settle two periods apart).
 */
export interface Job {
	/** lower-case words joined by hyphens, e.g. `mail-outbox` */
	name: string;
	/** how often the job runs */
	everyMs: number;
	/** the first run after start (default: everyMs) */
	firstAfterMs?: number;
	/** one schedule for every instance, kept in `job_runs` (for jobs that run hours apart) */
	shared?: boolean;
	run: () => Promise<unknown>;
}

/** The advisory lock class of background jobs: 'jobs' in ASCII. */
export const JOB_LOCK_CLASS = 0x6a6f6273;

/** This process as named in `job_runs.last_instance` (REGOLOG_INSTANCE, or host and pid). */
export const instanceName = process.env.REGOLOG_INSTANCE || `${hostname()}:${process.pid}`;

export type RunOutcome<T> = { ran: true; value: T } | { ran: false; reason: 'busy' | 'recent' };

/**
 * Runs `fn` unless another instance (or this one) is running the job of that name: then answers
 * `{ ran: false, reason: 'busy' }` at once, without waiting. With `everyMs`, a run started less
 * than nine tenths of that ago anywhere answers `reason: 'recent'`. A failure of `fn` is recorded in
 * `job_runs` (with `everyMs`) and thrown.
 */
export async function runExclusive<T>(name: string, fn: () => Promise<T>, opts: { sq?: Sequelize; everyMs?: number } = {}): Promise<RunOutcome<T>> {
	const sq = opts.sq ?? db();
	const t = await sq.transaction();
	let failure: unknown = null;
	try {
		const [{ got }] = await sq.query<{ got: boolean }>('SELECT pg_try_advisory_xact_lock(:cls, hashtext(:name)) AS got', {
			type: QueryTypes.SELECT, replacements: { cls: JOB_LOCK_CLASS, name }, transaction: t
		});
		if (!got) {
			await t.rollback();
			return { ran: false, reason: 'busy' };
		}
		if (opts.everyMs !== undefined) {
			const recent = await sq.query('SELECT 1 FROM job_runs WHERE name = :name AND last_started_at > now() - make_interval(secs => :secs)', {
				type: QueryTypes.SELECT, replacements: { name, secs: (0.9 * opts.everyMs) / 1000 }, transaction: t
			});
			if (recent.length) {
				await t.rollback();
				return { ran: false, reason: 'recent' };
			}
		}
		const started = new Date();
		let value: T | undefined;
		try {
			value = await fn();
		} catch (e) {
			failure = e;
		}
		if (opts.everyMs !== undefined) {
			await sq.query(
				`INSERT INTO job_runs (name, last_started_at, last_finished_at, last_instance, last_error, runs)
				 VALUES (:name, :started, clock_timestamp(), :instance, :error, 1)
				 ON CONFLICT (name) DO UPDATE SET last_started_at = EXCLUDED.last_started_at, last_finished_at = EXCLUDED.last_finished_at,
				   last_instance = EXCLUDED.last_instance, last_error = EXCLUDED.last_error, runs = job_runs.runs + 1`,
				{ replacements: { name, started, instance: instanceName, error: failure === null ? null : String((failure as Error)?.message ?? failure).slice(0, 500) }, transaction: t }
			);
		}
		await t.commit();
		if (failure !== null) throw failure;
		return { ran: true, value: value as T };
	} catch (e) {
		if (!(t as unknown as { finished?: string }).finished) await t.rollback().catch(() => {});
		throw e;
	}
}

const timers = new Map<string, ReturnType<typeof setInterval>>();
const inFlight = new Map<string, Promise<unknown>>();

/**
 * Runs a registered job now, through the lock, unless this process is already running it; the
 * answer is the run in progress or the new one. A failure only logs: the next tick tries again.
 */
export function kickJob(job: Job): Promise<unknown> {
	let p = inFlight.get(job.name);
	if (!p) {
		p = runExclusive(job.name, job.run, { everyMs: job.shared ? job.everyMs : undefined })
			.catch((e) => console.error(`[regolog] background job ${job.name} failed:`, (e as Error)?.message ?? e))
			.finally(() => inFlight.delete(job.name));
		inFlight.set(job.name, p);
	}
	return p;
}

/** Schedules the jobs in this process (once per name); the timers do not keep the process alive. */
export function startJobs(jobs: Job[]): void {
	for (const job of jobs) {
		if (!/^[a-z][a-z0-9-]{1,62}$/.test(job.name)) throw new Error(`job name "${job.name}" must be lower-case words joined by hyphens`);
		if (timers.has(job.name)) continue;
		const timer = setInterval(() => void kickJob(job), job.everyMs);
		timer.unref?.();
		timers.set(job.name, timer);
		setTimeout(() => void kickJob(job), job.firstAfterMs ?? job.everyMs).unref?.();
	}
}

/** Whether a job of that name is scheduled in this process. */
export function jobScheduled(name: string): boolean {
	return timers.has(name);
}
