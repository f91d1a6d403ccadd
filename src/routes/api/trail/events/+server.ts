import { json } from '@sveltejs/kit';
import { z } from 'zod';
import { QueryTypes } from 'sequelize';
import { endpoint, readQuery } from '$lib/server/api';
import { models } from '$lib/server/models';
import { legacyCode, parseCode } from '$lib/domain/codes';
import type { RequestHandler } from './$types';

const query = z.strictObject({
	subjectType: z.string().regex(/^[a-z_]{2,40}$/, 'must be a subject type such as item or transfer').optional(),
	subjectId: z.string().max(100, 'is at most 100 characters').optional(),
	action: z.string().regex(/^[a-z_.]{2,80}$/, 'must be an action or its prefix, such as transfer.signed').optional(),
	after: z.coerce.number({ error: 'must be an event number' }).int().min(0).optional(),
	limit: z.coerce.number({ error: 'must be a number' }).int().min(1).max(1000, 'is at most 1000').default(200)
});

/** Trail events for auditors, oldest first, filtered by subject and action prefix. */
export const GET: RequestHandler = endpoint(async ({ url }) => {
	const q = readQuery(url, query);
	const where: string[] = ['seq > :after'];
	if (q.subjectType) where.push('subject_type = :subjectType');
	// an item code names the same subject in both its forms: events written before migration 0090
	// keep the code with a hyphen before its check character
	const code = q.subjectId ? parseCode(q.subjectId) : null;
	const subjectIds = code?.ok ? [code.code, legacyCode(code.code)] : q.subjectId ? [q.subjectId] : [];
	if (q.subjectId) where.push('subject_id IN (:subjectIds)');
	if (q.action) where.push(`action LIKE :action || '%'`);
	const rows = await models().query<{ seq: number; at: Date; actor_label: string; action: string; subject_type: string; subject_id: string; before: unknown; after: unknown; hash: string }>(
		`SELECT seq, at, actor_label, action, subject_type, subject_id, before, after, hash FROM trail_events WHERE ${where.join(' AND ')} ORDER BY seq LIMIT :limit`,
		{ type: QueryTypes.SELECT, replacements: { ...q, subjectIds, after: q.after ?? 0 } }
	);
	return json({
		events: rows.map((r) => ({ seq: Number(r.seq), at: new Date(r.at).toISOString(), actor: r.actor_label, action: r.action, subject: { type: r.subject_type, id: r.subject_id }, before: r.before, after: r.after, hash: r.hash })),
		next: rows.length === q.limit ? Number(rows[rows.length - 1].seq) : null
	});
});
