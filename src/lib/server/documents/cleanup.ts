import { DeleteObjectsCommand, ListObjectsV2Command } from '@aws-sdk/client-s3';
import { QueryTypes, type Sequelize } from 'sequelize';
import { config } from '../config';
import { defaultTarget, type StorageTarget } from './objects';
import type { Job } from '../jobs';

export interface CleanupResult {
	/** objects looked at under documents/ */
	scanned: number;
	/** keys removed: older than the grace period and named by no document record */
	removed: string[];
	/** objects without a record, left because they are younger than the grace period (an upload may be finishing) */
	young: number;
}

/**
 * Finds objects under documents/ that no document record names and removes those older than the
 * grace period. An upload stores its object before its record, so a young object without a record
 * may be an upload in progress: it is left for the next run.
 */
export async function cleanupOrphans(sq: Sequelize, opts: { target?: StorageTarget; graceMs?: number; now?: Date } = {}): Promise<CleanupResult> {
	const target = opts.target ?? defaultTarget();
	const graceMs = opts.graceMs ?? config.documents.orphanGraceMinutes * 60_000;
	const cutoff = (opts.now ?? new Date()).getTime() - graceMs;
	const result: CleanupResult = { scanned: 0, removed: [], young: 0 };
	let token: string | undefined;
	do {
		const page = await target.s3.send(new ListObjectsV2Command({ Bucket: target.bucket, Prefix: 'documents/', ContinuationToken: token, MaxKeys: 1000 }));
		const objects = page.Contents ?? [];
		result.scanned += objects.length;
		const keys = objects.map((o) => o.Key!).filter(Boolean);
		const known = new Set(
			keys.length
				? (await sq.query<{ object_key: string }>('SELECT object_key FROM documents WHERE object_key IN (:keys)', { type: QueryTypes.SELECT, replacements: { keys } })).map((r) => r.object_key)
				: []
		);
		const stale: string[] = [];
		for (const o of objects) {
			if (!o.Key || known.has(o.Key)) continue;
			if ((o.LastModified?.getTime() ?? 0) <= cutoff) stale.push(o.Key);
			else result.young++;
		}
		if (stale.length) {
			// the record check again, just before removing: an upload may have finished meanwhile
			const late = new Set(
				(await sq.query<{ object_key: string }>('SELECT object_key FROM documents WHERE object_key IN (:keys)', { type: QueryTypes.SELECT, replacements: { keys: stale } })).map((r) => r.object_key)
			);
			const gone = stale.filter((k) => !late.has(k));
			if (gone.length) {
				await target.s3.send(new DeleteObjectsCommand({ Bucket: target.bucket, Delete: { Objects: gone.map((Key) => ({ Key })), Quiet: true } }));
				result.removed.push(...gone);
			}
		}
		token = page.IsTruncated ? page.NextContinuationToken : undefined;
	} while (token);
	return result;
}

/**
 * The clean-up as a background job: every REGOLOG_CLEANUP_EVERY_MINUTES on one instance of all
 * (the schedule is shared), first half a minute after start. A run cut short leaves objects for
 * the next; it never removes one whose record exists, since it asks again just before removing.
 */
export function documentCleanupJob(sq: () => Sequelize): Job {
	return {
		name: 'document-cleanup',
		everyMs: config.documents.cleanupEveryMinutes * 60_000,
		firstAfterMs: 30_000,
		shared: true,
		run: async () => {
			const r = await cleanupOrphans(sq());
			if (r.removed.length) console.log(`[regolog] document clean-up removed ${r.removed.length} objects without a record`);
			return r;
		}
	};
}
